import { formatPsnr } from '../engine';

/** Fixed-width table for terminal output; numbers right-aligned, text left-aligned. */
export function table(header: string[], rows: (string | number)[][]): string {
  const cells = [header, ...rows.map((r) => r.map(String))];
  const widths = header.map((_, c) => Math.max(...cells.map((r) => r[c].length)));
  const line = (r: string[], isHeader: boolean) =>
    r.map((v, c) => (c === 0 || isHeader ? v.padEnd(widths[c]) : v.padStart(widths[c]))).join('  ').trimEnd();
  return [line(cells[0], true), ...cells.slice(1).map((r) => line(r, false))].join('\n') + '\n';
}

export const fmt = {
  bpp: (v: number) => v.toFixed(4),
  mse: (v: number) => (v === 0 ? '0' : v < 0.01 ? v.toExponential(3) : v.toFixed(3)),
  psnr: (v: number) => formatPsnr(v),
  ssim: (v: number | null) => (v === null ? 'n/a' : v.toFixed(5)),
};

/** JSON with +Infinity (identical images' PSNR) written as null, since JSON has no infinity. */
export function jsonLine(value: unknown): string {
  return `${JSON.stringify(value, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v))}\n`;
}
