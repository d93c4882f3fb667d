/**
 * Kernels of entropy-constrained VQ (training/ecvq.ts wires them): the penalised nearest search and the centroid
 * update. Distances are the engine's exact ones (exact-distance.ts: Σ (x_i − c_i)² in index order, float64), so a
 * choice is made on the same numbers whatever the codebook holds.
 */

/**
 * Per vector, the index j minimising ‖x − c_j‖² + penalties[j] (float64; equal costs go to the lowest index).
 *
 * Two exact shortcuts, neither of which can change a result:
 * - Candidates are visited outwards from the vector's first component in the codewords' order by first component;
 *   once (x_0 − c_0)² plus the smallest penalty exceeds the best cost, no codeword further out in that direction
 *   can reach it (its distance is at least that first term).
 * - Partial-distance elimination: a candidate is abandoned once its partial sum plus penalty exceeds the best cost
 *   (or equals it at a higher index).
 * Float64 addition of non-negative terms never decreases, so a skipped candidate's full cost could neither win nor
 * take a tie: the result equals a full search, bit for bit. Starting from the vector's previous cell (`hinted`)
 * gives a close bound at once.
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
  // Codewords by first component (ties by index), and the smallest penalty.
  const order = Uint32Array.from({ length: k }, (_, j) => j).sort((a, b) => codewords[a * d] - codewords[b * d] || a - b);
  const first = Float64Array.from(order, (j) => codewords[j * d]);
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
    const x0 = vectors[vo];
    // First sorted position whose first component is ≥ x0.
    let lo = 0;
    let hi = k;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (first[mid] < x0) lo = mid + 1;
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
      const t = first[p] - x0;
      if (t * t + minPenalty > best) break;
      if (order[p] !== start) consider(vo, order[p]);
    }
    for (let p = lo - 1; p >= 0; p--) {
      const t = x0 - first[p];
      if (t * t + minPenalty > best) break;
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
