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
 *
 * Each vector remembers which chosen codeword is nearest to it. A new codeword at least
 * twice as far from that one as the vector is cannot come closer to it (triangle
 * inequality: ‖x − c'‖ ≥ ‖c − c'‖ − ‖x − c‖ ≥ ‖x − c‖), so its distance is not computed.
 * The test is applied with a relative margin far above float64 rounding, so every vector
 * skipped is one whose exact distance would not have replaced its minimum: the picks are
 * those of the unpruned rule, bit for bit, and only fewer distances are computed.
 */
export async function initKmeansPlusPlus(
  vectors: Float32Array, d: number, k: number, rng: Rng, signal?: AbortSignal,
): Promise<Float32Array> {
  const n = vectors.length / d;
  const out = new Float32Array(k * d);
  const minDist = new Float64Array(n);
  const nearest = new Uint32Array(n);
  // Squared distances from the newest codeword to each earlier one.
  const fromNewest = new Float64Array(k);
  let pick = rng.nextInt(n);
  out.set(vectors.subarray(pick * d, (pick + 1) * d), 0);
  for (let v = 0; v < n; v++) minDist[v] = exactDistance(vectors, v * d, out, 0, d);
  let lastYield = performance.now();
  for (let c = 1; c < k; c++) {
    // O(N·K·d) at worst on the calling thread: give the event loop a turn every ~20 ms and
    // stop promptly on cancellation.
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
    const off = c * d;
    out.set(vectors.subarray(pick * d, (pick + 1) * d), off);
    for (let j = 0; j < c; j++) fromNewest[j] = exactDistance(out, j * d, out, off, d);
    for (let v = 0; v < n; v++) {
      const m = minDist[v];
      if (m === 0) continue;
      // ‖c − c'‖² ≥ 4‖x − c‖² (with margin) ⇒ ‖x − c'‖² ≥ ‖x − c‖².
      if (fromNewest[nearest[v]] > PRUNE_FACTOR * m) continue;
      const dist = exactDistance(vectors, v * d, out, off, d);
      if (dist < m) {
        minDist[v] = dist;
        nearest[v] = c;
      }
    }
  }
  return out;
}

/**
 * 4 from the triangle inequality in squared form, times 1 + 1e-9: each float64 distance of
 * float32 vectors carries a relative error of at most about d·2⁻⁵³ (≈ 1e-14 for d = 768),
 * so a margin of 1e-9 leaves every skip exact.
 */
const PRUNE_FACTOR = 4 * (1 + 1e-9);
