/**
 * The evaluation CSV files, one definition for the studio's downloads and the command line's files: the columns (unit
 * in the name: `_db`, `_px`, `bpp_` bits per pixel; `mse` is per pixel component on the 0..255 scale), how each
 * value is written, and the RFC 4180 file (server/engine/io/csv.ts). A column that does not apply to a row is empty.
 */
import { writeCsv } from '../io/csv';
import { EXACT } from '../vocabulary';

/** One point of a rate–distortion curve: a codebook, or a standard codec at one quality. */
export interface CurveCsvPoint {
  /** The codebook's id in the studio; null where none is stored (the command line's sweep keeps no codebook files). */
  codebook: string | number | null;
  /** 'vq' for a codebook, else the baseline codec (jpeg, webp, avif). */
  codec: string;
  bits: number | null;
  codebookSize: number | null;
  quality: number | null;
  bppFixed: number | null;
  bppEntropy: number | null;
  bppActual: number;
  mse: number;
  /** +Infinity (or null with mse 0) for an exact reconstruction, written as EXACT.csv. */
  psnr: number | null;
  ssim: number | null;
}

/** One codebook measured on one image. */
export interface ImageCsvRow {
  codebook: string | number;
  bits: number;
  codebookSize: number;
  /** The image's file name. */
  image: string;
  width: number;
  height: number;
  /** Bytes of the coded file (container) of this image. */
  codedBytes: number;
  bppFixed: number;
  bppEntropy: number;
  bppActual: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
}

export const CURVE_CSV_COLUMNS = ['codec', 'codebook', 'bits', 'codebook_size', 'quality', 'bpp_fixed', 'bpp_entropy', 'bpp_actual', 'mse', 'psnr_db', 'ssim'] as const;

export const IMAGE_CSV_COLUMNS = [
  'codebook', 'bits', 'codebook_size', 'image', 'width_px', 'height_px', 'coded_bytes', 'bpp_fixed', 'bpp_entropy', 'bpp_actual', 'mse', 'psnr_db', 'ssim',
] as const;

/** A number as a CSV value: shortest round-trip decimal; +∞ as EXACT.csv; null (does not apply) as an empty field. */
export function csvNumber(value: number | null): string {
  if (value === null) return '';
  if (Number.isFinite(value)) return String(value);
  if (value === Infinity) return EXACT.csv;
  return value === -Infinity ? `-${EXACT.csv}` : 'nan';
}

/** PSNR in dB: an exact reconstruction (+∞, or null beside an MSE of 0 as the studio stores it) is EXACT.csv. */
export function csvPsnr(psnr: number | null, mse: number): string {
  return csvNumber(psnr === null && mse === 0 ? Infinity : psnr);
}

/**
 * Text typed by a person (file names): a leading =, +, -, @, tab or CR gets a ' in front, so a spreadsheet opening
 * the file shows the text instead of running it as a formula (OWASP, "CSV Injection").
 */
export function csvText(value: string): string {
  return /^[=+\-@\t\r]/.test(value) ? `'${value}` : value;
}

const idText = (id: string | number | null) => (id === null ? '' : typeof id === 'number' ? String(id) : csvText(id));

/** The rate–distortion curve as an RFC 4180 file with CURVE_CSV_COLUMNS. */
export function curveCsv(points: readonly CurveCsvPoint[]): string {
  return writeCsv(
    CURVE_CSV_COLUMNS,
    points.map((p) => [
      csvText(p.codec), idText(p.codebook), csvNumber(p.bits), csvNumber(p.codebookSize), csvNumber(p.quality),
      csvNumber(p.bppFixed), csvNumber(p.bppEntropy), csvNumber(p.bppActual), csvNumber(p.mse), csvPsnr(p.psnr, p.mse), csvNumber(p.ssim),
    ]),
  );
}

/** Per-image figures of one or more codebooks as an RFC 4180 file with IMAGE_CSV_COLUMNS. */
export function imageEvaluationCsv(rows: readonly ImageCsvRow[]): string {
  return writeCsv(
    IMAGE_CSV_COLUMNS,
    rows.map((r) => [
      idText(r.codebook), csvNumber(r.bits), csvNumber(r.codebookSize), csvText(r.image), csvNumber(r.width), csvNumber(r.height), csvNumber(r.codedBytes),
      csvNumber(r.bppFixed), csvNumber(r.bppEntropy), csvNumber(r.bppActual), csvNumber(r.mse), csvPsnr(r.psnr, r.mse), csvNumber(r.ssim),
    ]),
  );
}
