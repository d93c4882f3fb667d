import { describe, expect, it } from 'vitest';
import type { RunCurve, RunMetrics } from '../../../server/contracts';
import {
  csvField, curveCsv, CURVE_CSV_COLUMNS, EXACT, imageEvaluationCsv, IMAGE_CSV_COLUMNS, runCurveCsv, runMetricsCsv, writeCsv,
} from '../../../server/engine';

/**
 * A reader written from RFC 4180 section 2's grammar (file = record *(CRLF record) [CRLF]; field = escaped /
 * non-escaped; escaped = DQUOTE *(TEXTDATA / COMMA / CR / LF / 2DQUOTE) DQUOTE), strict: it throws on anything the
 * grammar does not allow, so a round trip through it proves the writer's output is valid RFC 4180.
 */
function readRfc4180(text: string): string[][] {
  const records: string[][] = [];
  let i = 0;
  while (i < text.length) {
    const record: string[] = [];
    for (;;) {
      let field = '';
      if (text[i] === '"') {
        i += 1;
        for (;;) {
          if (i >= text.length) throw new Error('unterminated quoted field');
          if (text[i] === '"') {
            if (text[i + 1] === '"') { field += '"'; i += 2; continue; }
            i += 1;
            break;
          }
          field += text[i];
          i += 1;
        }
      } else {
        while (i < text.length && text[i] !== ',' && text[i] !== '\r') {
          if (text[i] === '"' || text[i] === '\n') throw new Error(`bare ${JSON.stringify(text[i])} at ${i}`);
          field += text[i];
          i += 1;
        }
      }
      record.push(field);
      if (text[i] === ',') { i += 1; continue; }
      if (text.startsWith('\r\n', i)) { i += 2; break; }
      if (i >= text.length) break;
      throw new Error(`unexpected ${JSON.stringify(text[i])} at ${i}`);
    }
    records.push(record);
  }
  return records;
}

describe('the RFC 4180 writer', () => {
  it('ends every record, the last one too, with CRLF (RFC 4180 §2 rules 1 and 2)', () => {
    // RFC 4180 §2 rule 1's worked example: aaa,bbb,ccc CRLF zzz,yyy,xxx CRLF
    expect(writeCsv(['aaa', 'bbb', 'ccc'], [['zzz', 'yyy', 'xxx']])).toBe('aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n');
  });

  it('writes a field without comma, quote, CR or LF bare (RFC 4180 §2 rule 5)', () => {
    expect(csvField('plain text; with spaces and ∞')).toBe('plain text; with spaces and ∞');
    expect(csvField('')).toBe('');
  });

  it('quotes a field holding CRLF, a comma, a lone CR or a lone LF (RFC 4180 §2 rule 6)', () => {
    // RFC 4180 §2 rule 6's worked example: "aaa","b CRLF bb","ccc" CRLF zzz,yyy,xxx
    expect(writeCsv(['aaa', 'b\r\nbb', 'ccc'], [['zzz', 'yyy', 'xxx']])).toBe('aaa,"b\r\nbb",ccc\r\nzzz,yyy,xxx\r\n');
    expect(csvField('a,b')).toBe('"a,b"');
    expect(csvField('a\rb')).toBe('"a\rb"');
    expect(csvField('a\nb')).toBe('"a\nb"');
  });

  it('doubles a double quote inside a quoted field (RFC 4180 §2 rule 7)', () => {
    // RFC 4180 §2 rule 7's worked example: "aaa","b""bb","ccc"
    expect(writeCsv(['aaa', 'b"bb', 'ccc'], [])).toBe('aaa,"b""bb",ccc\r\n');
    expect(csvField('"')).toBe('""""');
  });

  it('writes every hostile field so that a strict RFC 4180 reader gives it back unchanged', () => {
    const hostile = ['', ',', '"', '""', '\r', '\n', '\r\n', 'a,"b"\r\nc', ' spaced ', '=SUM(A1)', 'ünïcode ∞'];
    const rows = hostile.map((h, i) => [String(i), h, `${h}${h}`]);
    expect(readRfc4180(writeCsv(['n', 'once', 'twice'], rows))).toEqual([['n', 'once', 'twice'], ...rows]);
  });
});

describe('the evaluation CSV files', () => {
  const image = {
    codebook: 7, bits: 4, codebookSize: 16, image: 'tile, "north".png', width: 37, height: 29, codedBytes: 120,
    bppFixed: 0.25, bppEntropy: 0.21, bppActual: 0.8944, mse: 12.5, psnr: 37.161, ssim: 0.93,
  };

  it('names each per-image column with its unit and writes one CRLF record per row', () => {
    const csv = imageEvaluationCsv([image]);
    expect(IMAGE_CSV_COLUMNS).toContain('psnr_db');
    expect(IMAGE_CSV_COLUMNS).toContain('width_px');
    expect(readRfc4180(csv)).toEqual([
      [...IMAGE_CSV_COLUMNS],
      ['7', '4', '16', 'tile, "north".png', '37', '29', '120', '0.25', '0.21', '0.8944', '12.5', '37.161', '0.93'],
    ]);
  });

  it(`writes an exact reconstruction's PSNR as ${EXACT.csv}, whether given as +∞ or as null beside an MSE of 0`, () => {
    const rows = readRfc4180(imageEvaluationCsv([{ ...image, mse: 0, psnr: Infinity, ssim: 1 }, { ...image, mse: 0, psnr: null, ssim: 1 }]));
    const psnr = IMAGE_CSV_COLUMNS.indexOf('psnr_db');
    expect(rows.slice(1).map((r) => r[psnr])).toEqual(['inf', 'inf']);
  });

  it('leaves a column that does not apply empty, and a missing SSIM empty', () => {
    const rows = readRfc4180(curveCsv([
      { codec: 'jpeg', codebook: null, bits: null, codebookSize: null, quality: 80, bppFixed: null, bppEntropy: null, bppActual: 1.5, mse: 9, psnr: 38.6, ssim: null },
    ]));
    expect(rows).toEqual([[...CURVE_CSV_COLUMNS], ['jpeg', '', '', '', '80', '', '', '1.5', '9', '38.6', '']]);
  });

  it('puts a quote before a file name a spreadsheet would run as a formula (OWASP, CSV Injection)', () => {
    const rows = readRfc4180(imageEvaluationCsv([{ ...image, image: '=HYPERLINK("x").png' }, { ...image, image: '-1.png' }]));
    expect(rows.slice(1).map((r) => r[IMAGE_CSV_COLUMNS.indexOf('image')])).toEqual(['\'=HYPERLINK("x").png', "'-1.png"]);
  });
});

describe("the studio's downloads", () => {
  const figures = { bppFixed: 0.25, bppEntropy: 0.2, bppActual: 0.3, bppRaw: 0.5, mse: 4, psnr: 42.1, ssim: 0.97, lossless: false };
  const exact = { ...figures, mse: 0, psnr: null, ssim: 1, lossless: true };

  it('writes the curve as the API returns it in the columns of cellwright sweep, codebooks then baselines by codec', () => {
    const curve: RunCurve = {
      run: { id: 1, name: 'r', state: 'succeeded' }, heldOutHash: 'h', color: 'luma', bd: { method: 'pchip', againstBaselines: [] },
      points: [{ ...figures, codebookId: 31, bits: 1, size: 2, structure: 'full', lambda: null }, { ...exact, codebookId: 32, bits: 2, size: 4, structure: 'full', lambda: null }],
      baselines: { jpeg: [{ quality: 20, bpp: 0.9, mse: 30, psnr: 33.4, ssim: 0.8 }], webp: [], avif: [{ quality: 50, bpp: 0.5, mse: 20, psnr: 35.1, ssim: null }] },
    };
    expect(readRfc4180(runCurveCsv(curve))).toEqual([
      [...CURVE_CSV_COLUMNS],
      ['vq', '31', '1', '2', '', '0.25', '0.2', '0.3', '4', '42.1', '0.97'],
      ['vq', '32', '2', '4', '', '0.25', '0.2', '0.3', '0', EXACT.csv, '1'],
      ['jpeg', '', '', '', '20', '', '', '0.9', '30', '33.4', '0.8'],
      ['avif', '', '', '', '50', '', '', '0.5', '20', '35.1', ''],
    ]);
  });

  it('writes the per-image metrics as the API returns them in the columns of cellwright eval --csv', () => {
    const metrics: RunMetrics = {
      run: { id: 1, name: 'r', state: 'succeeded' }, heldOutHash: 'h',
      codebooks: [{ codebookId: 31, bits: 1, size: 2, images: [{ ...exact, imageId: 5, fileName: 'tile,1.png', width: 8, height: 6, containerBytes: 21, rawBytes: 74 }] }],
    };
    expect(readRfc4180(runMetricsCsv(metrics))).toEqual([
      [...IMAGE_CSV_COLUMNS],
      ['31', '1', '2', 'tile,1.png', '8', '6', '21', '0.25', '0.2', '0.3', '0', EXACT.csv, '1'],
    ]);
  });
});
