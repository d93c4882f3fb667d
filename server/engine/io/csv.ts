/**
 * A CSV writer as RFC 4180 ("Common Format and MIME Type for Comma-Separated Values (CSV) Files") section 2 defines
 * the format: records end with CRLF (rule 1, the last one too, rule 2 allows it), the header is an ordinary first
 * record (rule 3), fields are separated by commas (rule 4), and a field holding a comma, a double quote, CR or LF is
 * enclosed in double quotes (rule 6) with each double quote inside written twice (rule 7). Every other field is
 * written bare (rule 5 makes quoting optional). The writer changes no field's text; what the text is, is the caller's.
 */

/** RFC 4180 §2 rule 1: each record ends with CRLF. */
export const CSV_LINE_END = '\r\n';

/** One field as RFC 4180 §2 rules 5–7 write it: quoted only when it holds a comma, a double quote, CR or LF. */
export function csvField(text: string): string {
  // RFC 4180 §2 rule 6: these four characters need the enclosing quotes; rule 7: a quote inside is doubled.
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** A whole file: the header record, then one record per row, every record ending with CRLF (RFC 4180 §2 rules 1–3). */
export function writeCsv(header: readonly string[], rows: readonly (readonly string[])[]): string {
  return [header, ...rows].map((r) => r.map(csvField).join(',') + CSV_LINE_END).join('');
}

/**
 * Reads an RFC 4180 file into records of fields: CRLF or LF line ends, quoted fields with doubled quotes inside
 * (§2 rules 5–7), a last record with or without its line end (rule 2). A quote left open is an error.
 */
export function readCsv(text: string): string[][] {
  const records: string[][] = [];
  let record: string[] = [];
  let field = '';
  let i = 0;
  let quoted = false;
  while (i < text.length) {
    const ch = text[i];
    if (quoted) {
      if (ch === '"' && text[i + 1] === '"') {
        field += '"';
        i += 2;
      } else if (ch === '"') {
        quoted = false;
        i += 1;
      } else {
        field += ch;
        i += 1;
      }
    } else if (ch === '"' && field === '') {
      quoted = true;
      i += 1;
    } else if (ch === ',') {
      record.push(field);
      field = '';
      i += 1;
    } else if (ch === '\r' || ch === '\n') {
      record.push(field);
      records.push(record);
      record = [];
      field = '';
      i += ch === '\r' && text[i + 1] === '\n' ? 2 : 1;
    } else {
      field += ch;
      i += 1;
    }
  }
  if (quoted) throw new SyntaxError('the file ends inside a quoted field');
  if (field !== '' || record.length > 0) {
    record.push(field);
    records.push(record);
  }
  return records;
}
