import type { Codebook } from '../format/codebook-schema';
import type { EncodedImage } from '../format/codec';
import { indexBits } from '../format/rate-bits';
import type { PixelImage } from '../io/image';
import { concealIndex, popcount, transitionByDistance } from './transition';

/** The decoder's pixel value of a codeword component (clamped to 0..255, rounded half up), as `reconstruct` computes it. */
function pixelOf(v: number): number {
  return v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
}

/**
 * Per sent index i and component k, the expected change of the squared error when the b index bits cross a binary
 * symmetric channel with bit-error rate p (Farvardin 1990; Zeger & Gersho 1990: D = Σ_i p_i Σ_j P(j|i) E‖x − c_j‖²
 * with P(j|i) = p^h(i,j) (1 − p)^(b − h(i,j))). With r_j the decoded pixel of codeword j (after concealment),
 * E[(x − r_J)²] − (x − r_i)² = A[i,k] − 2x·B[i,k], where A = Σ_j P(j|i)(r_j² − r_i²) and B = Σ_j P(j|i)(r_j − r_i).
 * Written as differences so a tiny p is not lost in the rounding of the noiseless error.
 * @returns A and B: K × d, row-major
 */
export function expectedErrorTerms(codebook: Codebook, p: number): { a: Float64Array; b: Float64Array } {
  const { size: K, dimension: d } = codebook;
  const bits = indexBits(K);
  const weight = transitionByDistance(p, bits);
  const pixels = new Float64Array(K * d);
  for (let n = 0; n < K * d; n += 1) pixels[n] = pixelOf(codebook.codewords[n]);
  const a = new Float64Array(K * d);
  const b = new Float64Array(K * d);
  const words = 2 ** bits;
  for (let i = 0; i < K; i += 1) {
    const ri = i * d;
    for (let j = 0; j < words; j += 1) {
      if (j === i) continue;
      const w = weight[popcount(i ^ j)];
      const rj = concealIndex(j, K) * d;
      for (let k = 0; k < d; k += 1) {
        const diff = pixels[rj + k] - pixels[ri + k];
        a[ri + k] += w * diff * (pixels[rj + k] + pixels[ri + k]);
        b[ri + k] += w * diff;
      }
    }
  }
  return { a, b };
}

/**
 * The expected squared error, summed over the image's samples, of an image coded with a plain (not mean-removed)
 * codebook after its index bits cross the channel: the noiseless error plus, per visible sample, A − 2x·B
 * (expectedErrorTerms). The padding that the decoder crops counts for nothing, as in the measured error.
 * @returns the noiseless and the expected sum of squared errors
 */
export function expectedSquaredError(codebook: Codebook, terms: { a: Float64Array; b: Float64Array }, image: PixelImage, encoded: EncodedImage, decoded: Uint8Array): { noiseless: number; expected: number } {
  const patch = codebook.patch!;
  const { width, height, channels, pixels } = image;
  const d = codebook.dimension;
  let noiseless = 0;
  let extra = 0;
  for (let y = 0; y < height; y += 1) {
    const by = Math.floor(y / patch.height);
    const row = y - by * patch.height;
    for (let x = 0; x < width; x += 1) {
      const bx = Math.floor(x / patch.width);
      const base = encoded.indices[by * encoded.blocksX + bx] * d + (row * patch.width + (x - bx * patch.width)) * channels;
      const at = (y * width + x) * channels;
      for (let c = 0; c < channels; c += 1) {
        const v = pixels[at + c];
        const e = v - decoded[at + c];
        noiseless += e * e;
        extra += terms.a[base + c] - 2 * v * terms.b[base + c];
      }
    }
  }
  return { noiseless, expected: noiseless + extra };
}

/**
 * The expected channel distortion of an index assignment, per vector component: Σ_i p_i Σ_j P(j|i) ‖y_i − y_c(j)‖² / d,
 * with p_i the codewords' usage (uniform when no usage is recorded) and c the decoder's concealment of unused words.
 * This is the quantity index assignment lowers; the noiseless (source) part does not depend on the assignment.
 */
export function channelDistortion(codebook: Codebook, p: number): number {
  const { size: K, dimension: d, codewords } = codebook;
  const bits = indexBits(K);
  const weight = transitionByDistance(p, bits);
  const prior = usagePrior(codebook.usage);
  let total = 0;
  for (let i = 0; i < K; i += 1) {
    if (prior[i] === 0) continue;
    let row = 0;
    for (let j = 0; j < 2 ** bits; j += 1) {
      const c = concealIndex(j, K);
      if (c === i) continue;
      let dist = 0;
      for (let k = 0; k < d; k += 1) {
        const e = codewords[i * d + k] - codewords[c * d + k];
        dist += e * e;
      }
      row += weight[popcount(i ^ j)] * dist;
    }
    total += prior[i] * row;
  }
  return total / d;
}

/** Usage counts as probabilities; uniform when every count is zero (a codebook made without training data). */
export function usagePrior(usage: Uint32Array): Float64Array {
  const sum = usage.reduce((s, u) => s + u, 0);
  return sum === 0 ? new Float64Array(usage.length).fill(1 / usage.length) : Float64Array.from(usage, (u) => u / sum);
}
