/**
 * The evaluation CSV files, one definition for the studio's downloads and the command line's files: the columns (unit
 * in the name: `_db`, `_px`, `bpp_` bits per pixel; `mse` is per pixel component on the 0..255 scale), how each
 * value is written, and the RFC 4180 file (server/engine/io/csv.ts). A column that does not apply to a row is empty.
 */
import { EngineInputError } from '../input-error';
import { readCsv, writeCsv } from '../io/csv';
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

// ---- the studio's downloads, from its curve and per-image results as the API returns them ----

interface StoredFigures {
  bppFixed: number;
  bppEntropy: number;
  bppActual: number;
  mse: number;
  /** null: exact (with mse 0), as the studio stores it. */
  psnr: number | null;
  ssim: number | null;
}
interface StoredBaselinePoint {
  quality: number;
  bpp: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
}

/**
 * The studio's curve download (GET …/runs/:id/curve?format=csv): one row per codebook, then each baseline codec's
 * points by quality, in the columns `cellwright sweep` writes. Takes the curve as the API returns it (RunCurve).
 */
export function runCurveCsv(curve: {
  points: readonly (StoredFigures & { codebookId: number; bits: number; size: number })[];
  baselines: Readonly<Record<string, readonly StoredBaselinePoint[]>>;
}): string {
  const codebooks: CurveCsvPoint[] = curve.points.map((p) => ({
    codec: 'vq', codebook: p.codebookId, bits: p.bits, codebookSize: p.size, quality: null,
    bppFixed: p.bppFixed, bppEntropy: p.bppEntropy, bppActual: p.bppActual, mse: p.mse, psnr: p.psnr, ssim: p.ssim,
  }));
  const baselines: CurveCsvPoint[] = Object.entries(curve.baselines).flatMap(([codec, points]) =>
    points.map((p) => ({
      codec, codebook: null, bits: null, codebookSize: null, quality: p.quality,
      bppFixed: null, bppEntropy: null, bppActual: p.bpp, mse: p.mse, psnr: p.psnr, ssim: p.ssim,
    })),
  );
  return curveCsv([...codebooks, ...baselines]);
}

/**
 * The studio's per-image download (GET …/runs/:id/metrics?format=csv): one row per codebook and image, in the columns
 * `cellwright eval --csv` writes. Takes the metrics as the API returns them (RunMetrics).
 */
export function runMetricsCsv(metrics: {
  codebooks: readonly {
    codebookId: number;
    bits: number;
    size: number;
    images: readonly (StoredFigures & { fileName: string; width: number; height: number; containerBytes: number })[];
  }[];
}): string {
  return imageEvaluationCsv(
    metrics.codebooks.flatMap((c) =>
      c.images.map((i) => ({
        codebook: c.codebookId, bits: c.bits, codebookSize: c.size, image: i.fileName, width: i.width, height: i.height,
        codedBytes: i.containerBytes, bppFixed: i.bppFixed, bppEntropy: i.bppEntropy, bppActual: i.bppActual, mse: i.mse, psnr: i.psnr, ssim: i.ssim,
      })),
    ),
  );
}

/** The studio's batch matrix download (GET …/evaluation-batches/:jobId/matrix?format=csv): one row per codebook and set. */
export const MATRIX_CSV_COLUMNS = [
  'codebook', 'codebook_name', 'bits', 'codebook_size', 'image_set', 'set_name', 'images', 'bpp_fixed', 'bpp_entropy', 'bpp_actual', 'mse', 'psnr_db', 'ssim',
] as const;

export interface MatrixCsvRow {
  codebook: number;
  codebookName: string;
  bits: number | null;
  codebookSize: number | null;
  /** null for a list of images chosen one by one. */
  imageSet: number | null;
  setName: string;
  images: number;
  /** null until the cell is measured: its figure columns are then empty. */
  figures: StoredFigures | null;
}

/** A batch's codebooks × sets matrix as an RFC 4180 file with MATRIX_CSV_COLUMNS (units as in the curve file). */
export function evaluationMatrixCsv(rows: readonly MatrixCsvRow[]): string {
  return writeCsv(
    MATRIX_CSV_COLUMNS,
    rows.map((r) => {
      const f = r.figures;
      return [
        String(r.codebook), csvText(r.codebookName), csvNumber(r.bits), csvNumber(r.codebookSize), idText(r.imageSet), csvText(r.setName), csvNumber(r.images),
        csvNumber(f?.bppFixed ?? null), csvNumber(f?.bppEntropy ?? null), csvNumber(f?.bppActual ?? null), csvNumber(f?.mse ?? null),
        f ? csvPsnr(f.psnr, f.mse) : '', csvNumber(f?.ssim ?? null),
      ];
    }),
  );
}

// ---- reading a curve file back (the command line's `bd`) ----

/** A CSV value as a number: empty → null, EXACT.csv → +∞; anything else must be a decimal number. */
function parseCsvNumber(text: string, where: string): number | null {
  if (text === '') return null;
  if (text === EXACT.csv) return Infinity;
  if (text === `-${EXACT.csv}`) return -Infinity;
  const value = Number(text);
  if (text.trim() === '' || Number.isNaN(value)) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${where}: "${text}" is not a number`);
  return value;
}

/**
 * Reads a curve file written by curveCsv (`cellwright sweep`, or the studio's curve download): the header must name
 * every one of CURVE_CSV_COLUMNS (in any order). A text field protected by csvText keeps its leading '.
 */
export function readCurveCsv(text: string, name = 'curve.csv'): CurveCsvPoint[] {
  const [header, ...records] = readCsv(text).filter((r) => !(r.length === 1 && r[0] === ''));
  if (!header) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${name}: the file is empty`);
  const missing = CURVE_CSV_COLUMNS.filter((c) => !header.includes(c));
  if (missing.length > 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${name}: not a curve file (no ${missing.join(', ')} column)`);
  const at = (record: string[], column: (typeof CURVE_CSV_COLUMNS)[number]) => record[header.indexOf(column)] ?? '';
  return records.map((r, k) => {
    const where = `${name} line ${k + 2}`;
    const num = (column: (typeof CURVE_CSV_COLUMNS)[number]) => parseCsvNumber(at(r, column), `${where}, ${column}`);
    const bppActual = num('bpp_actual');
    const mse = num('mse');
    if (bppActual === null || mse === null) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${where}: bpp_actual and mse are required`);
    const codebook = at(r, 'codebook');
    return {
      codec: at(r, 'codec'),
      codebook: codebook === '' ? null : codebook,
      bits: num('bits'),
      codebookSize: num('codebook_size'),
      quality: num('quality'),
      bppFixed: num('bpp_fixed'),
      bppEntropy: num('bpp_entropy'),
      bppActual,
      mse,
      psnr: num('psnr_db'),
      ssim: num('ssim'),
    };
  });
}
