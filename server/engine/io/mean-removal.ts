import { EngineInputError } from '../input-error';
import { MEAN_BITS } from '../vocabulary';

/**
 * Mean-removed VQ: each block's mean over all its components is coded by a uniform scalar quantizer with m bits,
 * and the residual (block − quantized mean) is what the codebook quantizes.
 *
 * The quantizer splits [0, 255] into L = 2^m equal cells of width 255 / L and reconstructs at cell centres
 * (a midrise quantizer, the MSE-optimal uniform choice for a uniformly spread mean):
 *   code q = min(L − 1, floor(mean · L / 255)),  level(q) = (q + 0.5) · 255 / L.
 */
export type Preprocessing = { kind: 'none' } | { kind: 'mean-removed'; meanBits: number };

// Coded mean bits: at least 1 (0 in a run means no mean removal), at most the vocabulary's limit.
export const MEAN_BITS_MIN = 1;
export const MEAN_BITS_MAX = MEAN_BITS.max;

export function checkMeanBits(bits: number): number {
  if (!Number.isInteger(bits) || bits < MEAN_BITS_MIN || bits > MEAN_BITS_MAX) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `mean bits must be an integer from ${MEAN_BITS_MIN} to ${MEAN_BITS_MAX}, got ${bits}`, 'meanBits');
  }
  return bits;
}

export function meanBitsOf(pre: Preprocessing): number {
  return pre.kind === 'mean-removed' ? pre.meanBits : 0;
}

export function quantizeMean(mean: number, bits: number): number {
  const levels = 2 ** bits;
  const q = Math.floor((mean * levels) / 255);
  return q < 0 ? 0 : q >= levels ? levels - 1 : q;
}

export function meanLevel(code: number, bits: number): number {
  return ((code + 0.5) * 255) / 2 ** bits;
}

/**
 * Removes each vector's quantized mean in place and returns the mean codes.
 * @param vectors  N × d, row-major; overwritten with residuals
 * @returns        N mean codes
 */
export function removeMeans(vectors: Float32Array, dimension: number, bits: number): Uint8Array {
  const n = vectors.length / dimension;
  const codes = new Uint8Array(n);
  for (let v = 0; v < n; v += 1) {
    const base = v * dimension;
    let sum = 0;
    for (let k = 0; k < dimension; k += 1) sum += vectors[base + k];
    const code = quantizeMean(sum / dimension, bits);
    codes[v] = code;
    const level = meanLevel(code, bits);
    for (let k = 0; k < dimension; k += 1) vectors[base + k] -= level;
  }
  return codes;
}
