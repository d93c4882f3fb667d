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
