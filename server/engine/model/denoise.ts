import type { Codebook } from '../format/codebook-schema';
import { checkImageMatchesCodebook } from '../format/codec';
import type { PixelImage } from '../io/image';
import { createRng } from '../training';
import { squaredDistance, type PatchMixture } from './mixture';
import { empiricalQuantile } from './threshold';

/** How each noisy patch is replaced: its nearest codeword, or the posterior mean under the mixture. */
export type DenoiseEstimator = 'hard' | 'mean';

/**
 * Patch origins along one axis: 0, step, 2·step, … and, when the last of those leaves pixels uncovered, the origin
 * that ends on the last pixel, so every pixel is covered. An image side shorter than the patch gets one origin (0)
 * and the patch is read with the edge replicated.
 */
export function patchOrigins(size: number, side: number, step: number): number[] {
  if (size <= side) return [0];
  const out: number[] = [];
  for (let o = 0; o + side <= size; o += step) out.push(o);
  if (out[out.length - 1] + side < size) out.push(size - side);
  return out;
}

/**
 * Sharpness of the posterior: terms more than this many nats below the largest weigh less than e^−40 ≈ 4·10^−18 of
 * it, under float64's resolution of a sum that the largest term (weight 1 after shifting) is part of, so they are
 * skipped without changing the result beyond rounding.
 */
const NEGLIGIBLE_LOG_WEIGHT = 40;

/**
 * The estimate of one clean patch from a noisy one y (d values, in the codebook's vector domain), y = x + n with
 * n ~ N(0, σ²I):
 * - hard: the nearest codeword c* (a MAP-like choice of one component, ignoring σ);
 * - mean: the posterior mean of x under the mixture with the noise added to each component's variance:
 *   w_k ∝ π_k N(y; c_k, (σ_k² + σ²) I) and x̂ = Σ_k w_k (c_k + σ_k²/(σ_k² + σ²) · (y − c_k)), the minimum
 *   mean-squared-error estimate under the model (Bayes' rule over the components; within one, the conditional mean of a
 *   Gaussian observed in Gaussian noise). As σ → 0 it tends to y itself.
 * @returns (y, out) => void, writing d values into out
 */
export function patchEstimator(mixture: PatchMixture, sigma: number, estimator: DenoiseEstimator): (y: Float64Array, out: Float64Array) => void {
  const { size: k, dimension: d, means, logWeights, variances } = mixture;
  if (estimator === 'hard') {
    return (y, out) => {
      let best = Infinity;
      let bestIndex = 0;
      for (let j = 0; j < k; j += 1) {
        const dist = squaredDistance(y, 0, means, j * d, d);
        if (dist < best) {
          best = dist;
          bestIndex = j;
        }
      }
      for (let t = 0; t < d; t += 1) out[t] = means[bestIndex * d + t];
    };
  }
  const sigma2 = sigma * sigma;
  const logNorm = new Float64Array(k);
  const half = new Float64Array(k);
  const gain = new Float64Array(k);
  for (let j = 0; j < k; j += 1) {
    const s = variances[j] + sigma2;
    logNorm[j] = logWeights[j] - (d / 2) * Math.log(2 * Math.PI * s);
    half[j] = 1 / (2 * s);
    gain[j] = variances[j] / s;
  }
  const terms = new Float64Array(k);
  return (y, out) => {
    let max = -Infinity;
    for (let j = 0; j < k; j += 1) {
      const term = logNorm[j] - squaredDistance(y, 0, means, j * d, d) * half[j];
      terms[j] = term;
      if (term > max) max = term;
    }
    // Weights relative to the largest (log-sum-exp shifted by the maximum), one exp each, normalised at the end.
    // Σ w_k (c_k + g_k (y − c_k)) = Σ w_k (1 − g_k) c_k + (Σ w_k g_k) y, so the inner loop is one multiply-add.
    out.fill(0);
    let total = 0;
    let towardY = 0;
    for (let j = 0; j < k; j += 1) {
      const shifted = terms[j] - max;
      if (shifted < -NEGLIGIBLE_LOG_WEIGHT) continue;
      const w = Math.exp(shifted);
      total += w;
      towardY += w * gain[j];
      const a = w * (1 - gain[j]);
      const base = j * d;
      for (let t = 0; t < d; t += 1) out[t] += a * means[base + t];
    }
    for (let t = 0; t < d; t += 1) out[t] = (out[t] + towardY * y[t]) / total;
  };
}

/**
 * The mixture with each codeword's own mean removed. A mean-removed codebook's codewords are residuals from the
 * quantized block mean, so each carries a small mean of its own (up to half a quantizer step); the denoiser removes the
 * patch's exact mean instead, and compares and estimates in that zero-mean space, so every estimate keeps exactly the
 * patch's own mean.
 */
function centred(mixture: PatchMixture): PatchMixture {
  const { size: k, dimension: d } = mixture;
  const means = new Float32Array(mixture.means);
  for (let j = 0; j < k; j += 1) {
    let m = 0;
    for (let t = 0; t < d; t += 1) m += means[j * d + t];
    m /= d;
    for (let t = 0; t < d; t += 1) means[j * d + t] -= m;
  }
  return { ...mixture, means };
}

/**
 * Denoises an image with overlapping patches (origins from patchOrigins at `step` on both axes), each replaced by
 * patchEstimator's estimate; for a mean-removed codebook the patch's own (noisy, unquantized) mean is removed first and
 * added back after, against the codewords with their own means removed (centred). Overlapping estimates are averaged per pixel, then clamped to 0..255 and rounded half up.
 * With mean removal the noise on the residual is taken as σ² per component, though removing the noisy mean leaves
 * σ²(1 − 1/d) per component (and correlation): an approximation on the side of more smoothing.
 * @returns height × width × channels, 8-bit
 */
export function denoiseImage(
  codebook: Codebook,
  mixture: PatchMixture,
  image: PixelImage,
  options: { sigma: number; estimator: DenoiseEstimator; step: number; signal?: AbortSignal },
): { pixels: Uint8Array; patches: number } {
  const patch = checkImageMatchesCodebook(codebook, image);
  const { width, height, channels, pixels } = image;
  const d = mixture.dimension;
  const meanRemoved = codebook.preprocessing.kind === 'mean-removed';
  const estimate = patchEstimator(meanRemoved ? centred(mixture) : mixture, options.sigma, options.estimator);
  const sum = new Float64Array(width * height * channels);
  const count = new Uint32Array(width * height);
  const y = new Float64Array(d);
  const x = new Float64Array(d);
  const xs = patchOrigins(width, patch.width, options.step);
  const ys = patchOrigins(height, patch.height, options.step);
  for (const y0 of ys) {
    options.signal?.throwIfAborted();
    for (const x0 of xs) {
      // Read the patch (edge replicated beyond the image), in the codebook's component order.
      let i = 0;
      for (let row = 0; row < patch.height; row += 1) {
        const py = Math.min(y0 + row, height - 1);
        for (let col = 0; col < patch.width; col += 1) {
          const base = (py * width + Math.min(x0 + col, width - 1)) * channels;
          for (let c = 0; c < channels; c += 1) y[i++] = pixels[base + c];
        }
      }
      let mean = 0;
      if (meanRemoved) {
        for (let t = 0; t < d; t += 1) mean += y[t];
        mean /= d;
        for (let t = 0; t < d; t += 1) y[t] -= mean;
      }
      estimate(y, x);
      // Add the estimate to the pixels the patch covers inside the image.
      i = 0;
      for (let row = 0; row < patch.height; row += 1) {
        const py = y0 + row;
        for (let col = 0; col < patch.width; col += 1, i += channels) {
          const px = x0 + col;
          if (py >= height || px >= width) continue;
          const p = py * width + px;
          count[p] += 1;
          for (let c = 0; c < channels; c += 1) sum[p * channels + c] += x[i + c] + mean;
        }
      }
    }
  }
  const out = new Uint8Array(sum.length);
  for (let p = 0; p < width * height; p += 1) {
    for (let c = 0; c < channels; c += 1) {
      const v = sum[p * channels + c] / count[p];
      out[p * channels + c] = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
    }
  }
  return { pixels: out, patches: xs.length * ys.length };
}

/**
 * 0.6745: the median of |Z| for a standard normal Z (Φ⁻¹(0.75) = 0.6744897…), so median|coefficient| / 0.6745
 * estimates σ for Gaussian coefficients (Donoho & Johnstone 1994, "Ideal spatial adaptation by wavelet shrinkage",
 * Biometrika 81(3)).
 */
export const MAD_GAUSSIAN = 0.6745;

/**
 * Noise level σ of an image (0..255 scale) by the median absolute deviation of its finest diagonal wavelet
 * coefficients (Donoho & Johnstone 1994): the orthonormal Haar HH coefficient of each 2 × 2 block at even positions,
 * (a − b − c + d) / 2 for [a b; c d], is insensitive to constant and linear-ramp content and, for independent
 * Gaussian noise of variance σ², is N(0, σ²) itself. σ̂ = median |HH| / 0.6745, the coefficients of every channel
 * pooled (the noise is taken as equal on each). Image detail at the finest scale raises the estimate; clipping at 0
 * and 255 and rounding to integers (variance 1/12) change it a little.
 */
export function estimateNoiseSigma(image: PixelImage): number {
  const { width, height, channels, pixels } = image;
  const bw = Math.floor(width / 2);
  const bh = Math.floor(height / 2);
  if (bw === 0 || bh === 0) return 0;
  const coefficients = new Float64Array(bw * bh * channels);
  let n = 0;
  for (let by = 0; by < bh; by += 1) {
    for (let bx = 0; bx < bw; bx += 1) {
      const top = (2 * by * width + 2 * bx) * channels;
      const bottom = top + width * channels;
      for (let c = 0; c < channels; c += 1) {
        const hh = (pixels[top + c] - pixels[top + channels + c] - pixels[bottom + c] + pixels[bottom + channels + c]) / 2;
        coefficients[n++] = Math.abs(hh);
      }
    }
  }
  return empiricalQuantile(coefficients, 0.5) / MAD_GAUSSIAN;
}

/**
 * The image with independent Gaussian noise of standard deviation `sigma` added to every component, from the engine's
 * seeded generator (normal(): Marsaglia's polar method), drawn in pixel order; each value is then clamped to 0..255
 * and rounded half up, as an 8-bit file of the noisy image holds it.
 */
export function addGaussianNoise(image: PixelImage, sigma: number, seed: number): PixelImage {
  const rng = createRng(seed);
  const pixels = new Float32Array(image.pixels.length);
  for (let i = 0; i < pixels.length; i += 1) {
    const v = image.pixels[i] + sigma * rng.normal();
    pixels[i] = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
  }
  return { ...image, pixels };
}
