/**
 * The engine's definition of an exact squared distance: Σ (x_i − c_i)² for i = 0..d−1 in
 * this order, each difference and the sum in float64. A difference of two float32 values
 * and its square are exact in float64, so only the summation rounds.
 */
export function exactDistance(
  a: Float32Array, aOffset: number, b: Float32Array, bOffset: number, d: number,
): number {
  let s = 0;
  for (let i = 0; i < d; i++) {
    const t = a[aOffset + i] - b[bOffset + i];
    s += t * t;
  }
  return s;
}

/**
 * Reference nearest search over all codewords with exact distances; ties go to the lowest
 * index. Slow (no blocking), used for checks and for tiny problems.
 * vectors: N × d, codewords: K × d, both row-major.
 */
export function bruteForceAssign(
  vectors: Float32Array, dimension: number, codewords: Float32Array,
): { indices: Uint32Array; distances: Float64Array } {
  const n = vectors.length / dimension;
  const k = codewords.length / dimension;
  const indices = new Uint32Array(n);
  const distances = new Float64Array(n);
  for (let v = 0; v < n; v++) {
    let best = Infinity;
    let bj = 0;
    for (let j = 0; j < k; j++) {
      const dist = exactDistance(vectors, v * dimension, codewords, j * dimension, dimension);
      if (dist < best) {
        best = dist;
        bj = j;
      }
    }
    indices[v] = bj;
    distances[v] = best;
  }
  return { indices, distances };
}
