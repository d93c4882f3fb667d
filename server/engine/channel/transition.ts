import { indexBits } from '../format/rate-bits';

/** Number of one bits of a non-negative 32-bit integer (Hamming weight). */
export function popcount(v: number): number {
  let x = v >>> 0;
  x -= (x >>> 1) & 0x55555555;
  x = (x & 0x33333333) + ((x >>> 2) & 0x33333333);
  return (Math.imul((x + (x >>> 4)) & 0x0f0f0f0f, 0x01010101) >>> 24);
}

/**
 * P(j | i) on a binary symmetric channel with bit-error rate p for b-bit words, as a function of the Hamming distance
 * h = h(i, j) alone: p^h (1 − p)^(b − h). Entry h of the returned table, h = 0..b.
 */
export function transitionByDistance(p: number, bits: number): Float64Array {
  const out = new Float64Array(bits + 1);
  for (let h = 0; h <= bits; h += 1) out[h] = p ** h * (1 - p) ** (bits - h);
  return out;
}

/**
 * What a decoder of a raw payload does with a received index j: j itself when it names a codeword, otherwise (only
 * possible when K is not a power of two, so K > 2^(b−1)) j with its most significant bit cleared, which always names
 * one. One definition, shared by the damaged-payload decoder and the expected-distortion formula.
 */
export function concealIndex(j: number, size: number): number {
  return j < size ? j : j - 2 ** (indexBits(size) - 1);
}
