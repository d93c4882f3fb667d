/**
 * The Bjøntegaard table as a file, one definition for the studio's download and the command line: one row per test
 * curve against a reference curve, with the method that drew the curves and the intervals the figures are averaged
 * over (RFC 4180 file through server/engine/io/csv.ts; units in the column names as in evaluation-csv.ts).
 */
import { writeCsv } from '../io/csv';
import type { BdMethod } from '../vocabulary';
import { csvNumber, csvText } from './evaluation-csv';

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
