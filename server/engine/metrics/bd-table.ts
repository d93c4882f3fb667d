/**
 * The Bjøntegaard table as a file, one definition for the studio's download and the command line: one row per test
 * curve against a reference curve, with the method that drew the curves and the intervals the figures are averaged
 * over (RFC 4180 file through server/engine/io/csv.ts; units in the column names as in evaluation-csv.ts).
 */
import { writeCsv } from '../io/csv';
import type { BdMethod } from '../vocabulary';
import { bdMissingReason, bdSummary, bjontegaard, BdRateError, emptyBdSummary, type RdPoint } from './bd-rate';
import { csvNumber, csvText, type CurveCsvPoint } from './evaluation-csv';

export interface BdTableRow {
  /** The reference curve: a run's or codebook set's name, or a codec (jpeg, webp, avif). */
  reference: string;
  test: string;
  method: BdMethod;
  /** The rate definition the curves use (fixed, entropy, actual). */
  rate: string;
  bdRate: number | null; // percent
  bdPsnr: number | null; // dB
  shared: { bpp: readonly [number, number] | null; psnr: readonly [number, number] | null };
  sharedFraction: { bpp: number; psnr: number };
  shortOverlap: boolean;
  /** Why a figure is missing, else null. */
  reason: string | null;
}

export const BD_TABLE_CSV_COLUMNS = [
  'reference', 'test', 'method', 'rate', 'bd_rate_percent', 'bd_psnr_db', 'shared_bpp_from', 'shared_bpp_to', 'shared_psnr_from_db', 'shared_psnr_to_db',
  'shared_fraction_bpp', 'shared_fraction_psnr', 'short_overlap', 'note',
] as const;

/** The table as an RFC 4180 file with BD_TABLE_CSV_COLUMNS; a figure that could not be computed is an empty field. */
export function bdTableCsv(rows: readonly BdTableRow[]): string {
  return writeCsv(
    BD_TABLE_CSV_COLUMNS,
    rows.map((r) => [
      csvText(r.reference), csvText(r.test), r.method, r.rate, csvNumber(r.bdRate), csvNumber(r.bdPsnr),
      csvNumber(r.shared.bpp?.[0] ?? null), csvNumber(r.shared.bpp?.[1] ?? null), csvNumber(r.shared.psnr?.[0] ?? null), csvNumber(r.shared.psnr?.[1] ?? null),
      csvNumber(r.sharedFraction.bpp), csvNumber(r.sharedFraction.psnr), r.shortOverlap ? 'true' : 'false', csvText(r.reason ?? ''),
    ]),
  );
}

export type CurveRate = 'fixed' | 'entropy' | 'actual';
const CODEC_NAMES: Record<string, string> = { jpeg: 'JPEG', webp: 'WebP', avif: 'AVIF' };

/**
 * The codebooks of a curve file (codec `vq`) against each standard codec in it: one row per codec, in the order the
 * codecs first appear. The codebooks' rate is the chosen definition; a codec's is always its file's bytes (actual).
 */
export function bdAgainstCodecs(points: readonly CurveCsvPoint[], rate: CurveRate, method: BdMethod, testName = 'codebooks'): BdTableRow[] {
  const vqRate = (p: CurveCsvPoint) => (rate === 'fixed' ? p.bppFixed : rate === 'entropy' ? p.bppEntropy : p.bppActual);
  // An exact reconstruction (PSNR = +∞) has no place on the fit; bjontegaard leaves such points out.
  const rd = (list: CurveCsvPoint[], rateOf: (p: CurveCsvPoint) => number | null): RdPoint[] =>
    list.map((p) => ({ rate: rateOf(p) ?? NaN, psnr: p.psnr === null ? (p.mse === 0 ? Infinity : NaN) : p.psnr }));
  const test = rd(points.filter((p) => p.codec === 'vq'), vqRate);
  const codecs = [...new Set(points.map((p) => p.codec).filter((c) => c !== 'vq'))];
  return codecs.map((codec) => {
    const reference = rd(points.filter((p) => p.codec === codec), (p) => p.bppActual);
    const base = { reference: CODEC_NAMES[codec] ?? codec, test: testName, rate };
    try {
      const r = bjontegaard(reference, test, method);
      return { ...base, ...bdSummary(r), reason: bdMissingReason(r) };
    } catch (err) {
      if (err instanceof BdRateError) return { ...base, ...emptyBdSummary(method), reason: err.message };
      throw err;
    }
  });
}
