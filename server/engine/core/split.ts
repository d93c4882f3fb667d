import type { TrainedCodebook } from './types';

/**
 * LBG splitting step: codewords `from` (size × d) grow to `to` codewords. Every codeword c
 * is split when doubling, otherwise the (to − size) cells with the largest total error
 * (lowest index on ties). The split pair is c + p, kept at c's index, and c − p, appended
 * in index order, with p = δσ·(1, …, 1) where σ is the cell's RMS error per component.
 * Returns the new codewords, to × d, row-major.
 */
export function splitCodebook(book: TrainedCodebook, d: number, to: number, delta: number): Float32Array {
  const size = book.size;
  const count = to - size;
  let chosen: number[];
  if (count >= size) {
    chosen = Array.from({ length: size }, (_, j) => j);
  } else {
    chosen = Array.from({ length: size }, (_, j) => j)
      .sort((a, b) => book.cellDistortion[b] - book.cellDistortion[a] || a - b)
      .slice(0, count)
      .sort((a, b) => a - b);
  }
  const out = new Float32Array(to * d);
  out.set(book.codewords.subarray(0, size * d));
  chosen.forEach((j, r) => {
    const used = book.usage[j];
    const sigma = used > 0 ? Math.sqrt(book.cellDistortion[j] / (used * d)) : 0;
    const p = delta * sigma;
    const dst = (size + r) * d;
    for (let i = 0; i < d; i++) {
      const c = book.codewords[j * d + i];
      out[j * d + i] = c + p;
      out[dst + i] = c - p;
    }
  });
  return out;
}
