import type { RunCurve, RunMetrics } from '../contracts';

/** Quotes a CSV field (RFC 4180) and defuses leading characters spreadsheets would run as a formula. */
function csvField(value: string | number | null): string {
  if (value === null) return '';
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : value > 0 ? 'inf' : '-inf';
  const text = /^[=+\-@\t\r]/.test(value) ? `'${value}` : value;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** Header (units in parentheses) and rows, CRLF line ends as RFC 4180 writes them. */
const csv = (header: string[], rows: (string | number | null)[][]) =>
  [header.join(','), ...rows.map((r) => r.map(csvField).join(','))].join('\r\n') + '\r\n';

/** A run name as a file name: letters, digits, dot, dash and underscore only. */
function fileNameStem(name: string): string {
  const stem = name
    .normalize('NFKD')
    .replace(/[^A-Za-z0-9._-]+/g, '-')
    .replace(/^[-.]+|[-.]+$/g, '')
    .slice(0, 80);
  return stem || 'run';
}

/** PSNR null in CSV means an exact reconstruction: written as inf (dB), the value it stands for. */
const csvPsnr = (psnr: number | null, mse: number) => (psnr === null && mse === 0 ? Infinity : psnr);

export interface CsvFile {
  fileName: string;
  text: string;
}

/** A run's rate–distortion curve as CSV, one line per codebook. */
export function curveCsv(c: RunCurve): CsvFile {
  const header = ['codebook_id', 'bits', 'size', 'bpp_fixed (bit/px)', 'bpp_entropy (bit/px)', 'bpp_actual (bit/px)', 'mse (per component)', 'psnr (dB)', 'ssim'];
  const rows = c.points.map((p) => [p.codebookId, p.bits, p.size, p.bppFixed, p.bppEntropy, p.bppActual, p.mse, csvPsnr(p.psnr, p.mse), p.ssim]);
  return { fileName: `${fileNameStem(c.run.name)}-curve.csv`, text: csv(header, rows) };
}

/** A run's per-image metrics as CSV, one line per codebook and held-out image. */
export function metricsCsv(m: RunMetrics): CsvFile {
  const header = [
    'codebook_id', 'bits', 'size', 'image_id', 'file_name', 'width (px)', 'height (px)', 'container_bytes (B)',
    'bpp_fixed (bit/px)', 'bpp_entropy (bit/px)', 'bpp_actual (bit/px)', 'mse (per component)', 'psnr (dB)', 'ssim',
  ];
  const rows = m.codebooks.flatMap((c) =>
    c.images.map((i) => [c.codebookId, c.bits, c.size, i.imageId, i.fileName, i.width, i.height, i.containerBytes, i.bppFixed, i.bppEntropy, i.bppActual, i.mse, csvPsnr(i.psnr, i.mse), i.ssim]),
  );
  return { fileName: `${fileNameStem(m.run.name)}-metrics.csv`, text: csv(header, rows) };
}
