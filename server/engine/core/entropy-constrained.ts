import { foldStatistics } from './shard-fold';
import type { EcvqPassRequest, EcvqShardPass } from './types';

/**
 * Kernels of entropy-constrained VQ (training/ecvq.ts wires them): the penalised nearest search and the centroid
 * update. Distances are the engine's exact ones (exact-distance.ts: Σ (x_i − c_i)² in index order, float64), so a
 * choice is made on the same numbers whatever the codebook holds.
 */

/** Float64 unit roundoff. */
const EPS = 2 ** -53;

/**
 * A unit direction along which the codewords spread most: 16 steps of power iteration on their covariance from
 * (1, …, 1)/√d, in float64 and a fixed order. Only the search order depends on it, so its accuracy affects the
 * speed of assignEntropyConstrained, never its result.
 * @param codewords K × d, row-major
 * @returns d components
 */
export function principalDirection(codewords: Float32Array, d: number): Float64Array {
  const k = codewords.length / d;
  const mean = new Float64Array(d);
  for (let j = 0; j < k; j++) for (let i = 0; i < d; i++) mean[i] += codewords[j * d + i];
  for (let i = 0; i < d; i++) mean[i] /= k;
  let u = new Float64Array(d).fill(1 / Math.sqrt(d));
  for (let step = 0; step < 16; step++) {
    const w = new Float64Array(d);
    for (let j = 0; j < k; j++) {
      let dot = 0;
      for (let i = 0; i < d; i++) dot += (codewords[j * d + i] - mean[i]) * u[i];
      for (let i = 0; i < d; i++) w[i] += (codewords[j * d + i] - mean[i]) * dot;
    }
    let norm = 0;
    for (let i = 0; i < d; i++) norm += w[i] * w[i];
    norm = Math.sqrt(norm);
    if (!(norm > 0) || !Number.isFinite(norm)) break;
    for (let i = 0; i < d; i++) w[i] /= norm;
    u = w;
  }
  return u;
}

/**
 * Per vector, the index j minimising ‖x − c_j‖² + penalties[j] (float64; equal costs go to the lowest index).
 *
 * Two exact shortcuts, neither of which can change a result:
 * - Candidates are visited outwards from the vector's projection on a direction u (principalDirection) in the
 *   codewords' order of projection. By Cauchy–Schwarz ‖x − c‖² ≥ (u·(x − c))²/‖u‖²; once that bound — computed
 *   with margins above the float64 rounding of the projections (4(d + 2)·2^−53 times Σ|u_i·x_i|, and as much for
 *   the codewords) and of the distance sum (a relative 1e-9) — plus the smallest penalty exceeds the best cost, no
 *   codeword further out in that direction can reach it.
 * - Partial-distance elimination: a candidate is abandoned once its partial sum plus penalty exceeds the best cost
 *   (or equals it at a higher index). Float64 addition of non-negative terms never decreases.
 * A skipped candidate's computed cost could therefore neither win nor take a tie: the result equals a full search,
 * bit for bit. Starting from the vector's previous cell (`hinted`) gives a close bound at once.
 *
 * @param vectors   N × d, row-major
 * @param codewords K × d, row-major
 * @param penalties K: λ·ℓ_j ≥ 0, in squared-error units
 * @param indices   N: on entry the previous cell of each vector when `hinted` (each < K); on return the chosen cell
 * @param errors    N (out): ‖x − c‖² of the chosen codeword
 */
export function assignEntropyConstrained(
  vectors: Float32Array, d: number, codewords: Float32Array, penalties: Float64Array,
  indices: Uint32Array, errors: Float64Array, hinted: boolean,
): void {
  const k = penalties.length;
  const n = indices.length;
  const u = principalDirection(codewords, d);
  let uNorm2 = 0;
  for (let i = 0; i < d; i++) uNorm2 += u[i] * u[i];
  const roundoff = 4 * (d + 2) * EPS;
  const shrink = (1 - 1e-9) / uNorm2;
  // Codewords by projection (ties by index), the largest rounding bound of a codeword's projection, the smallest penalty.
  const projection = new Float64Array(k);
  let codewordMargin = 0;
  for (let j = 0; j < k; j++) {
    let p = 0;
    let a = 0;
    for (let i = 0; i < d; i++) {
      p += u[i] * codewords[j * d + i];
      a += Math.abs(u[i] * codewords[j * d + i]);
    }
    projection[j] = p;
    codewordMargin = Math.max(codewordMargin, roundoff * a);
  }
  const order = Uint32Array.from({ length: k }, (_, j) => j).sort((a, b) => projection[a] - projection[b] || a - b);
  const sorted = Float64Array.from(order, (j) => projection[j]);
  let minPenalty = Infinity;
  for (let j = 0; j < k; j++) minPenalty = Math.min(minPenalty, penalties[j]);
  let best = 0;
  let bj = 0;
  let bestError = 0;
  // Full or partial cost of candidate j; takes it when it wins (lower cost, or equal cost at a lower index).
  const consider = (vo: number, j: number): void => {
    const pen = penalties[j];
    const co = j * d;
    let s = 0;
    for (let i = 0; i < d; i++) {
      const t = vectors[vo + i] - codewords[co + i];
      s += t * t;
      const cost = s + pen;
      if (cost > best || (cost === best && j > bj)) return;
    }
    best = s + pen;
    bj = j;
    bestError = s;
  };
  for (let v = 0; v < n; v++) {
    const vo = v * d;
    let q = 0;
    let a = 0;
    for (let i = 0; i < d; i++) {
      q += u[i] * vectors[vo + i];
      a += Math.abs(u[i] * vectors[vo + i]);
    }
    const margin = roundoff * a + codewordMargin;
    // First sorted position whose projection is ≥ q.
    let lo = 0;
    let hi = k;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (sorted[mid] < q) lo = mid + 1;
      else hi = mid;
    }
    const start = hinted ? indices[v] : order[Math.min(lo, k - 1)];
    bestError = 0;
    for (let i = 0; i < d; i++) {
      const t = vectors[vo + i] - codewords[start * d + i];
      bestError += t * t;
    }
    best = bestError + penalties[start];
    bj = start;
    for (let p = lo; p < k; p++) {
      const gap = sorted[p] - q - margin;
      if (gap > 0 && gap * gap * shrink + minPenalty > best) break;
      if (order[p] !== start) consider(vo, order[p]);
    }
    for (let p = lo - 1; p >= 0; p--) {
      const gap = q - sorted[p] - margin;
      if (gap > 0 && gap * gap * shrink + minPenalty > best) break;
      if (order[p] !== start) consider(vo, order[p]);
    }
    indices[v] = bj;
    errors[v] = bestError;
  }
}

/**
 * Centroid update: per cell the float64 sum of its vectors in vector order divided by the count, rounded to float32.
 * @param vectors N × d; indices N (each < k)
 * @returns codewords: k × d (a cell without vectors gets zeros; callers drop such cells first)
 */
export function cellCentroids(vectors: Float32Array, d: number, indices: Uint32Array, k: number): Float32Array {
  const sums = new Float64Array(k * d);
  const counts = new Uint32Array(k);
  for (let v = 0; v < indices.length; v++) {
    const so = indices[v] * d;
    const vo = v * d;
    counts[indices[v]]++;
    for (let i = 0; i < d; i++) sums[so + i] += vectors[vo + i];
  }
  const out = new Float32Array(k * d);
  for (let j = 0; j < k; j++) {
    if (counts[j] === 0) continue;
    for (let i = 0; i < d; i++) out[j * d + i] = sums[j * d + i] / counts[j];
  }
  return out;
}

/** Zeroth-order entropy of cell counts, −Σ p log2 p in bits per vector (Shannon 1948), summed in index order. */
export function usageEntropy(counts: ArrayLike<number>, total: number): number {
  let h = 0;
  for (let j = 0; j < counts.length; j++) {
    const c = counts[j];
    if (c > 0) h -= (c / total) * Math.log2(c / total);
  }
  return h;
}

/**
 * One shard's entropy-constrained pass (the per-shard step of training/ecvq.ts): assignEntropyConstrained over the
 * shard's vectors, then its counts, float64 centroid sums, per-cell and total squared error and Σ ℓ, each formed from
 * zero in vector order (the shard rule of shard-fold.ts).
 * `cells` (n) holds the shard's cells of its previous pass by starting-codebook index, on return this pass's; when
 * `hinted` each search starts from that cell (speed only: the search's result does not depend on where it starts).
 * @param vectors the shard's vectors, n × d
 */
export function ecvqShardPass(vectors: Float32Array, d: number, request: EcvqPassRequest, cells: Uint32Array, hinted: boolean): EcvqShardPass {
  const { codewords, k, penalties, lengths, origin } = request;
  const n = vectors.length / d;
  const indices = new Uint32Array(n);
  const errors = new Float64Array(n);
  if (hinted) {
    let top = 0;
    for (let j = 0; j < k; j++) top = Math.max(top, origin[j]);
    const at = new Int32Array(top + 1).fill(-1);
    for (let j = 0; j < k; j++) at[origin[j]] = j;
    // A previous cell that is gone (or from another λ's run) still names a valid starting candidate: cell 0.
    for (let v = 0; v < n; v++) indices[v] = Math.max(0, cells[v] <= top ? at[cells[v]] : 0);
  }
  assignEntropyConstrained(vectors, d, codewords.subarray(0, k * d), penalties, indices, errors, hinted);
  const counts = new Uint32Array(k);
  const sums = new Float64Array(k * d);
  const cellDistortion = new Float64Array(k);
  let total = 0;
  let bits = 0;
  for (let v = 0; v < n; v++) {
    const j = indices[v];
    counts[j]++;
    cellDistortion[j] += errors[v];
    total += errors[v];
    bits += lengths[j];
    const so = j * d;
    const vo = v * d;
    for (let i = 0; i < d; i++) sums[so + i] += vectors[vo + i];
    cells[v] = origin[j];
  }
  return { counts, sums, cellDistortion, total, bits };
}

/** The shards' entropy-constrained passes folded in shard order (shard-fold.ts): usage, per-cell and total error, Σ ℓ. */
export function foldEcvqPasses(parts: readonly EcvqShardPass[], k: number): { usage: Uint32Array; cellDistortion: Float64Array; total: number; bits: number } {
  const stats = foldStatistics(parts, k);
  let bits = 0;
  for (let s = 0; s < parts.length; s++) bits = s === 0 ? parts[s].bits : bits + parts[s].bits;
  return { ...stats, bits };
}

/** One shard's entropy-constrained passes where it is computed: its vectors (n × d) and their last cells (search hints). */
export class EcvqShardState {
  private readonly cells: Uint32Array;
  private hinted = false;
  constructor(private readonly vectors: Float32Array, private readonly d: number) {
    this.cells = new Uint32Array(vectors.length / d);
  }

  pass(request: EcvqPassRequest): EcvqShardPass {
    const out = ecvqShardPass(this.vectors, this.d, request, this.cells, this.hinted);
    this.hinted = true;
    return out;
  }
}
