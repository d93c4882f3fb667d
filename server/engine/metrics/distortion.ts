/** Squared-error distortion and PSNR on the 0..255 scale. */
import { EXACT } from '../vocabulary';

/** Sum of squared differences, accumulated in float64. */
export function sumSquaredError(a: ArrayLike<number>, b: ArrayLike<number>): number {
  if (a.length !== b.length) throw new RangeError(`length mismatch: ${a.length} vs ${b.length}`);
  let sum = 0;
  for (let i = 0; i < a.length; i += 1) {
    const e = a[i] - b[i];
    sum += e * e;
  }
  return sum;
}

/** Mean squared error per component (per pixel and channel). */
export function meanSquaredError(a: ArrayLike<number>, b: ArrayLike<number>): number {
  return a.length === 0 ? 0 : sumSquaredError(a, b) / a.length;
}

export const PEAK_8BIT = 255;

/**
 * PSNR in dB for 8-bit data: 10 · log10(255² / MSE) (common practice).
 * Identical images (MSE = 0) give +Infinity, never an error; text shows it as EXACT.text, JSON as EXACT.json, CSV as
 * EXACT.csv (server/engine/vocabulary.ts).
 */
export function psnrFromMse(mse: number, peak = PEAK_8BIT): number {
  if (mse === 0) return Infinity;
  return 10 * Math.log10((peak * peak) / mse);
}

/** PSNR for JSON: +Infinity has no JSON spelling, so it becomes EXACT.json (null; the docs say so). */
export function psnrForJson(psnr: number): number | null {
  return Number.isFinite(psnr) ? psnr : EXACT.json;
}

/** PSNR for people: two decimals, or EXACT.text ("∞ (exact)") for an exact reconstruction. */
export function formatPsnr(psnr: number): string {
  return Number.isFinite(psnr) ? `${psnr.toFixed(2)} dB` : EXACT.text;
}
