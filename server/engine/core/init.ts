import { EngineError, abortError } from './errors';
import { exactDistance } from './exact-distance';
import type { Rng } from './rng';

const sameVector = (vectors: Float32Array, d: number, a: number, b: number) => {
  for (let i = 0; i < d; i++) if (vectors[a * d + i] !== vectors[b * d + i]) return false;
  return true;
};

/**
 * K distinct training vectors in the order drawn: a seeded partial Fisher–Yates shuffle of
 * the indices, skipping any vector equal to one already taken. The caller has checked that
 * at least K distinct vectors exist, so the loop ends.
 * Returns codewords K × d, row-major.
 */
export function initRandom(vectors: Float32Array, d: number, k: number, rng: Rng): Float32Array {
  const n = vectors.length / d;
  const order = new Uint32Array(n);
  for (let i = 0; i < n; i++) order[i] = i;
  const chosen: number[] = [];
  const out = new Float32Array(k * d);
  for (let i = 0; i < n && chosen.length < k; i++) {
    const j = i + rng.nextInt(n - i);
    const t = order[i];
    order[i] = order[j];
    order[j] = t;
    const v = order[i];
    // Quadratic only in K for duplicates; typical sets have none among the first draws.
    if (chosen.some((u) => sameVector(vectors, d, u, v))) continue;
    out.set(vectors.subarray(v * d, (v + 1) * d), chosen.length * d);
    chosen.push(v);
  }
  if (chosen.length < k) {
    throw new EngineError('ENGINE_TOO_FEW_DISTINCT_VECTORS', `only ${chosen.length} distinct vectors for ${k} codewords`);
  }
  return out;
}

/**
 * k-means++ seeding (Arthur & Vassilvitskii, "k-means++: The Advantages of Careful
 * Seeding", SODA 2007): the first codeword uniformly at random, each next one a training
 * vector drawn with probability proportional to its squared distance to the nearest
 * codeword chosen so far. Weights are exact float64 distances summed in index order, so
 * the draw is reproducible. Returns codewords K × d, row-major.
 */
export async function initKmeansPlusPlus(
  vectors: Float32Array, d: number, k: number, rng: Rng, signal?: AbortSignal,
): Promise<Float32Array> {
  const n = vectors.length / d;
  const out = new Float32Array(k * d);
  const minDist = new Float64Array(n);
  let pick = rng.nextInt(n);
  out.set(vectors.subarray(pick * d, (pick + 1) * d), 0);
  for (let v = 0; v < n; v++) minDist[v] = exactDistance(vectors, v * d, out, 0, d);
  let lastYield = performance.now();
  for (let c = 1; c < k; c++) {
    // O(N·K·d) on the calling thread: give the event loop a turn every ~20 ms and stop
    // promptly on cancellation.
    if (performance.now() - lastYield > 20) {
      await new Promise((resolve) => setImmediate(resolve));
      lastYield = performance.now();
    }
    if (signal?.aborted) throw abortError(signal);
    let total = 0;
    for (let v = 0; v < n; v++) total += minDist[v];
    if (!(total > 0)) {
      throw new EngineError('ENGINE_TOO_FEW_DISTINCT_VECTORS', `only ${c} distinct vectors for ${k} codewords`);
    }
    const target = rng.next() * total;
    let acc = 0;
    pick = -1;
    for (let v = 0; v < n; v++) {
      if (minDist[v] === 0) continue;
      acc += minDist[v];
      pick = v;
      if (acc > target) break;
    }
    out.set(vectors.subarray(pick * d, (pick + 1) * d), c * d);
    const off = c * d;
    for (let v = 0; v < n; v++) {
      if (minDist[v] === 0) continue;
      const dist = exactDistance(vectors, v * d, out, off, d);
      if (dist < minDist[v]) minDist[v] = dist;
    }
  }
  return out;
}
