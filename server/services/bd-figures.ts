import type { BaselineCodecName, BdMethod, BdValues } from '../contracts';
import { BD_MIN_POINTS } from '../engine/vocabulary';
import { bdMissingReason, bdSummary, bjontegaard, BdRateError, emptyBdSummary, type RdPoint } from '../engine/metrics/bd-rate';

export const BASELINE_CODECS: readonly BaselineCodecName[] = ['jpeg', 'webp', 'avif'];
export const CODEC_NAMES: Record<BaselineCodecName, string> = { jpeg: 'JPEG', webp: 'WebP', avif: 'AVIF' };

/** Points as the studio stores them: PSNR null beside an exact reconstruction, which the fit leaves out. */
export const rdPoints = (points: readonly { bpp: number; psnr: number | null }[]): RdPoint[] => points.map((p) => ({ rate: p.bpp, psnr: p.psnr ?? Infinity }));

/** Bjøntegaard deltas of `test` against `reference` as the API states them; a pair that cannot be fitted says why. */
export function bdValuesOf(reference: RdPoint[], test: RdPoint[], method: BdMethod): BdValues {
  try {
    const r = bjontegaard(reference, test, method);
    return { ...bdSummary(r), reason: bdMissingReason(r) };
  } catch (err) {
    if (err instanceof BdRateError) return { ...emptyBdSummary(method), reason: err.message };
    throw err;
  }
}

/** Figures that could not be computed, with the reason. */
export const noBdValues = (method: BdMethod, reason: string): BdValues => ({ ...emptyBdSummary(method), reason });

/** A curve against each standard codec measured on the same images (a codec without points gets the reason). */
export function againstEachCodec(
  test: readonly { bpp: number; psnr: number | null }[],
  baselines: Readonly<Record<BaselineCodecName, readonly { bpp: number; psnr: number | null }[]>>,
  method: BdMethod,
): (BdValues & { codec: BaselineCodecName })[] {
  return BASELINE_CODECS.map((codec) => ({
    codec,
    ...(baselines[codec].length === 0
      ? noBdValues(method, `no ${CODEC_NAMES[codec]} points for this held-out list (not measured yet, or not encodable here)`)
      : bdValuesOf(rdPoints(baselines[codec]), rdPoints(test), method)),
  }));
}

/** Points a Bjøntegaard fit can use: a positive rate and a finite PSNR (an exact reconstruction has none). */
export const usablePointCount = (points: readonly { bpp: number; psnr: number | null }[]): number =>
  points.filter((p) => Number.isFinite(p.bpp) && p.bpp > 0 && p.psnr !== null && Number.isFinite(p.psnr)).length;

/** The reason a curve short of BD_MIN_POINTS usable points has no figures, or null when it has enough. */
export function notEnoughPoints(name: string, points: readonly { bpp: number; psnr: number | null }[]): string | null {
  const usable = usablePointCount(points);
  return usable >= BD_MIN_POINTS ? null : `not enough points: ${name} has ${usable} usable, a BD figure needs ${BD_MIN_POINTS}`;
}
