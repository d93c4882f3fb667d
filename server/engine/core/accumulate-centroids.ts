/**
 * sums[so..so+d) += vectors[vo..vo+d), one float64 addition per component. Unrolled by
 * four (each component still gets exactly one addition, so the bits do not change): the
 * loop overhead was the larger part of the time.
 */
export function addRow(sums: Float64Array, so: number, vectors: Float32Array, vo: number, d: number): void {
  const end = vo + d;
  for (; vo + 4 <= end; vo += 4, so += 4) {
    sums[so] += vectors[vo];
    sums[so + 1] += vectors[vo + 1];
    sums[so + 2] += vectors[vo + 2];
    sums[so + 3] += vectors[vo + 3];
  }
  for (; vo < end; vo++, so++) sums[so] += vectors[vo];
}

/**
 * Centroid update: per cell, the float64 sum of its vectors in vector order divided by the
 * count, rounded to float32. One pass in a fixed order, so the result never depends on how
 * the nearest search was split across threads. Cells with no vector keep their codeword
 * (the repair step runs first and leaves none).
 * vectors N × d, indices N, codewords K × d (updated in place); returns the counts.
 */
export function accumulateCentroids(
  vectors: Float32Array, d: number, indices: Uint32Array, codewords: Float32Array, k: number,
  sums: Float64Array = new Float64Array(k * d),
): Uint32Array {
  const n = indices.length;
  const counts = new Uint32Array(k);
  sums.fill(0, 0, k * d);
  for (let v = 0; v < n; v++) {
    const j = indices[v];
    counts[j]++;
    addRow(sums, j * d, vectors, v * d, d);
  }
  for (let j = 0; j < k; j++) {
    const c = counts[j];
    if (c === 0) continue;
    const so = j * d;
    for (let i = 0; i < d; i++) codewords[so + i] = sums[so + i] / c;
  }
  return counts;
}

/** Usage and total squared error per cell of an assignment. */
export function cellStatistics(
  indices: Uint32Array, distances: Float64Array, k: number,
): { usage: Uint32Array; cellDistortion: Float64Array; total: number } {
  const usage = new Uint32Array(k);
  const cellDistortion = new Float64Array(k);
  let total = 0;
  for (let v = 0; v < indices.length; v++) {
    usage[indices[v]]++;
    cellDistortion[indices[v]] += distances[v];
    total += distances[v];
  }
  return { usage, cellDistortion, total };
}
