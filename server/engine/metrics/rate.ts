import { indexBits } from '../format/rate-bits';

export { indexBits };

/**
 * Fixed-length rate in bits per pixel: (ceil(log2 K) + m) / (w · h), m the mean bits (0 without mean removal).
 * It counts the bits of one block over the pixels of one block; blocks padded at an image's right and bottom edges
 * cost slightly more per real pixel, which the actual (container) rate shows.
 */
export function bppFixed(size: number, meanBits: number, patchPixels: number): number {
  return (indexBits(size) + meanBits) / patchPixels;
}

/** Histogram of symbols 0..alphabet-1. */
export function histogram(symbols: ArrayLike<number>, alphabet: number): Uint32Array {
  const counts = new Uint32Array(alphabet);
  for (let i = 0; i < symbols.length; i += 1) counts[symbols[i]] += 1;
  return counts;
}

/** Empirical (zeroth-order) entropy in bits per symbol, −Σ p log2 p over the observed frequencies (Shannon 1948). */
export function entropyBits(counts: ArrayLike<number>): number {
  let total = 0;
  for (let i = 0; i < counts.length; i += 1) total += counts[i];
  if (total === 0) return 0;
  let h = 0;
  for (let i = 0; i < counts.length; i += 1) {
    const c = counts[i];
    if (c > 0) h -= (c / total) * Math.log2(c / total);
  }
  return h;
}
