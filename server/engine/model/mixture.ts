import type { Codebook } from '../format/codebook-schema';

/**
 * A codebook read as a density of the patches it was trained on: an isotropic Gaussian mixture with one component per
 * codeword (README.md in this folder gives the model, its estimates and its limits). All arithmetic is float64.
 */
export interface PatchMixture {
  size: number; // K
  dimension: number; // d
  means: Float32Array; // K × d, row-major: the codewords themselves
  weights: Float64Array; // K, summing to 1
  logWeights: Float64Array; // K
  variances: Float64Array; // K: σ_k², per vector component
  /** Where the variances come from: measured per cell on training vectors, the stored per-cell distortion, or the pooled figure. */
  varianceSource: VarianceSource;
  /** The pooled variance per component: every cell's squared error over every training component. */
  pooledVariance: number;
}

/**
 * Weight a cell with no training vectors gets, in training vectors: half of one, so the component stays possible
 * (a held-out patch may still fall there) but weighs less than any cell training actually reached. Half a count is
 * the Krichevsky–Trofimov / Jeffreys pseudo-count for an unseen outcome (common practice in count smoothing).
 */
export const ZERO_USAGE_WEIGHT = 0.5;

/**
 * Lowest variance per component: 1/12, the variance of rounding to whole 8-bit code values (a uniform error over one
 * quantizer step, Δ²/12 with Δ = 1; common practice). Images are stored as integers, so no cell is known more
 * precisely than that, and a cell that holds one training vector (distortion 0) does not become a spike.
 */
export const VARIANCE_FLOOR = 1 / 12;

/**
 * Pseudo-vectors at the pooled variance added to each cell's own estimate: a cell measured on n vectors gets
 * (D_k + m·d·σ̄²) / ((n_k + m)·d). With m = 1 a cell of one or two vectors leans on the pooled figure, while a cell of
 * hundreds is its own (a conjugate-prior style shrinkage; the value 1 is a choice, not a derived constant).
 */
export const VARIANCE_PSEUDO_VECTORS = 1;

/** Squared distance Σ (x_i − c_i)² over i = 0..d−1 in that order, in float64 (the core's exact distance). */
export function squaredDistance(x: ArrayLike<number>, xOffset: number, c: Float32Array, cOffset: number, d: number): number {
  let sum = 0;
  for (let i = 0; i < d; i += 1) {
    const e = x[xOffset + i] - c[cOffset + i];
    sum += e * e;
  }
  return sum;
}

/** Nearest codeword of each vector by exact float64 distance, ties to the lowest index. */
export function nearestCodewords(mixture: Pick<PatchMixture, 'size' | 'dimension' | 'means'>, vectors: Float32Array): { indices: Uint32Array; distances: Float64Array } {
  const { size: k, dimension: d, means } = mixture;
  const n = vectors.length / d;
  const indices = new Uint32Array(n);
  const distances = new Float64Array(n);
  for (let v = 0; v < n; v += 1) {
    let best = Infinity;
    let bestIndex = 0;
    for (let j = 0; j < k; j += 1) {
      const dist = squaredDistance(vectors, v * d, means, j * d, d);
      if (dist < best) {
        best = dist;
        bestIndex = j;
      }
    }
    indices[v] = bestIndex;
    distances[v] = best;
  }
  return { indices, distances };
}

/** Where a mixture's variances come from (README.md in this folder). */
export type VarianceSource = 'training-vectors' | 'cell-distortion' | 'stored-distortion';

/**
 * Per-cell variances from each cell's count n_k and summed squared error D_k over N training vectors:
 * σ̄² = ΣD_k / (N·d) pooled, σ_k² = (D_k + m·d·σ̄²) / ((n_k + m)·d) with m = VARIANCE_PSEUDO_VECTORS, floored at
 * VARIANCE_FLOOR.
 */
function cellVariances(counts: ArrayLike<number>, cellError: ArrayLike<number>, d: number): { variances: Float64Array; pooledVariance: number } {
  const k = counts.length;
  let n = 0;
  let sum = 0;
  for (let j = 0; j < k; j += 1) {
    n += counts[j];
    sum += cellError[j];
  }
  const pooledVariance = Math.max(n > 0 ? sum / (n * d) : 0, VARIANCE_FLOOR);
  const m = VARIANCE_PSEUDO_VECTORS;
  const variances = new Float64Array(k);
  for (let j = 0; j < k; j += 1) variances[j] = Math.max((cellError[j] + m * d * pooledVariance) / ((counts[j] + m) * d), VARIANCE_FLOOR);
  return { variances, pooledVariance };
}

/**
 * The mixture of a codebook.
 * - weights: π_k ∝ max(usage_k, ZERO_USAGE_WEIGHT), from the usage the codebook stores (its training vectors per cell);
 *   all-zero usage gives equal weights.
 * - variances (cellVariances), from the first of these that is given:
 *   `trainingVectors` (N × d, in the codebook's vector domain: already mean-removed when the codebook is): each
 *   vector's nearest codeword decides its cell, and counts and squared errors are measured on them;
 *   `cellDistortion` (K: each cell's summed squared error on the training vectors, as training reports it and the
 *   studio stores it for trained codebooks) with the codebook's usage as the counts;
 *   neither: the export format keeps no per-cell distortion, so every cell gets the pooled `training.distortion`
 *   (MSE per component on the training vectors), floored at VARIANCE_FLOOR.
 */
export function codebookMixture(codebook: Codebook, trainingVectors?: Float32Array, cellDistortion?: ArrayLike<number>): PatchMixture {
  const k = codebook.size;
  const d = codebook.dimension;
  let variances: Float64Array;
  let pooledVariance: number;
  let varianceSource: VarianceSource;
  if (trainingVectors && trainingVectors.length > 0) {
    const { indices, distances } = nearestCodewords({ size: k, dimension: d, means: codebook.codewords }, trainingVectors);
    const counts = new Float64Array(k);
    const cellError = new Float64Array(k);
    for (let v = 0; v < indices.length; v += 1) {
      counts[indices[v]] += 1;
      cellError[indices[v]] += distances[v];
    }
    ({ variances, pooledVariance } = cellVariances(counts, cellError, d));
    varianceSource = 'training-vectors';
  } else if (cellDistortion) {
    ({ variances, pooledVariance } = cellVariances(codebook.usage, cellDistortion, d));
    varianceSource = 'cell-distortion';
  } else {
    pooledVariance = Math.max(codebook.training.distortion, VARIANCE_FLOOR);
    variances = new Float64Array(k).fill(pooledVariance);
    varianceSource = 'stored-distortion';
  }
  return mixtureWithVariances(codebook, variances, varianceSource, pooledVariance);
}

/**
 * The mixture of a codebook with variances already worked out (by codebookMixture, kept and handed back): the same
 * weights from the codebook's usage, these variances.
 */
export function mixtureWithVariances(codebook: Codebook, variances: Float64Array, varianceSource: VarianceSource, pooledVariance: number): PatchMixture {
  const k = codebook.size;
  const weights = new Float64Array(k);
  let total = 0;
  for (let j = 0; j < k; j += 1) total += Math.max(codebook.usage[j], ZERO_USAGE_WEIGHT);
  for (let j = 0; j < k; j += 1) weights[j] = Math.max(codebook.usage[j], ZERO_USAGE_WEIGHT) / total;
  const logWeights = weights.map(Math.log);
  return { size: k, dimension: codebook.dimension, means: codebook.codewords, weights, logWeights, variances, varianceSource, pooledVariance };
}

/** log Σ exp(terms[0..count−1]), shifted by the largest term so nothing overflows (common practice). */
export function logSumExp(terms: Float64Array, count = terms.length): number {
  let max = -Infinity;
  for (let j = 0; j < count; j += 1) if (terms[j] > max) max = terms[j];
  if (max === -Infinity) return -Infinity;
  let sum = 0;
  for (let j = 0; j < count; j += 1) sum += Math.exp(terms[j] - max);
  return max + Math.log(sum);
}

export interface VectorScores {
  nearest: Uint32Array; // N: index of the nearest codeword (ties to the lowest index)
  distance: Float64Array; // N: squared distance to it, summed over the d components
  nll: Float64Array; // N: −log p(x) under the mixture, in nats per vector
}

/**
 * Scores vectors (N × d, in the codebook's vector domain) under the mixture:
 *   log p(x) = log Σ_k π_k (2π σ_k²)^(−d/2) exp(−‖x − c_k‖² / (2σ_k²)),
 * evaluated by log-sum-exp in float64 over every component; each vector's result depends on it and the mixture only.
 * `signal` is checked every 1024 vectors.
 */
export function scoreVectors(mixture: PatchMixture, vectors: Float32Array, signal?: AbortSignal): VectorScores {
  const { size: k, dimension: d, means, logWeights, variances } = mixture;
  const n = vectors.length / d;
  const logNorm = new Float64Array(k);
  const half = new Float64Array(k);
  for (let j = 0; j < k; j += 1) {
    logNorm[j] = logWeights[j] - (d / 2) * Math.log(2 * Math.PI * variances[j]);
    half[j] = 1 / (2 * variances[j]);
  }
  const terms = new Float64Array(k);
  const out: VectorScores = { nearest: new Uint32Array(n), distance: new Float64Array(n), nll: new Float64Array(n) };
  for (let v = 0; v < n; v += 1) {
    if ((v & 1023) === 0) signal?.throwIfAborted();
    let best = Infinity;
    let bestIndex = 0;
    for (let j = 0; j < k; j += 1) {
      const dist = squaredDistance(vectors, v * d, means, j * d, d);
      if (dist < best) {
        best = dist;
        bestIndex = j;
      }
      terms[j] = logNorm[j] - dist * half[j];
    }
    out.nearest[v] = bestIndex;
    out.distance[v] = best;
    out.nll[v] = -logSumExp(terms, k);
  }
  return out;
}
