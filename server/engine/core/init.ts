import { abortError } from './errors';
import { exactDistance } from './exact-distance';
import type { Rng } from './rng';

const sameVector = (vectors: Float32Array, d: number, a: number, b: number) => {
  for (let i = 0; i < d; i++) if (vectors[a * d + i] !== vectors[b * d + i]) return false;
  return true;
};

/**
 * K distinct training vectors in the order drawn: a seeded partial Fisher–Yates shuffle of
 * the indices, skipping any vector equal to one already taken. Precondition, checked once at
 * the engine's entry (train(): ENGINE_TOO_FEW_DISTINCT_VECTORS): at least K distinct vectors
 * exist, so K are found before the shuffle runs out. Every write stays inside `out` whatever
 * the input, so no check is repeated here.
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
  return out;
}

/**
 * What one k-means++ step reads and writes: the codewords chosen so far (K × d), each
 * vector's squared distance to its nearest chosen codeword and that codeword's index, and
 * the squared distances from the newest codeword to every earlier one.
 */
export interface SeedState {
  codewords: Float32Array;
  minDist: Float64Array;
  nearest: Uint32Array;
  fromNewest: Float64Array;
}

/**
 * Brings vectors [start, end) up to date with codeword c, the newest. A vector moves to c
 * when c is strictly nearer. A new codeword at least twice as far from a vector's nearest
 * one as the vector is cannot come closer to it (triangle inequality: ‖x − c'‖ ≥
 * ‖c − c'‖ − ‖x − c‖ ≥ ‖x − c‖), so its distance is not computed. The test is applied with
 * a relative margin far above float64 rounding, so every vector skipped is one whose exact
 * distance would not have replaced its minimum: the result is that of the unpruned rule,
 * bit for bit. Each vector depends only on itself, so any split of the range among
 * threads gives the same state.
 */
export function seedUpdateRange(vectors: Float32Array, d: number, state: SeedState, c: number, start: number, end: number): void {
  const { codewords, minDist, nearest, fromNewest } = state;
  const off = c * d;
  if (candidates.length < end - start) candidates = new Uint32Array(end - start);
  const list = candidates;
  let count = 0;
  for (let v = start; v < end; v++) {
    const m = minDist[v];
    if (m === 0) continue;
    // ‖c − c'‖² ≥ 4‖x − c‖² (with margin) ⇒ ‖x − c'‖² ≥ ‖x − c‖².
    if (fromNewest[nearest[v]] > PRUNE_FACTOR * m) continue;
    list[count++] = v;
  }
  // Four vectors at a time, each summed in its own order exactly as exactDistance sums it: the four
  // chains of additions overlap in the processor instead of waiting on one another.
  let i = 0;
  for (; i + 3 < count; i += 4) {
    const v0 = list[i];
    const v1 = list[i + 1];
    const v2 = list[i + 2];
    const v3 = list[i + 3];
    const b0 = v0 * d;
    const b1 = v1 * d;
    const b2 = v2 * d;
    const b3 = v3 * d;
    let s0 = 0;
    let s1 = 0;
    let s2 = 0;
    let s3 = 0;
    for (let j = 0; j < d; j++) {
      const w = codewords[off + j];
      const t0 = vectors[b0 + j] - w;
      const t1 = vectors[b1 + j] - w;
      const t2 = vectors[b2 + j] - w;
      const t3 = vectors[b3 + j] - w;
      s0 += t0 * t0;
      s1 += t1 * t1;
      s2 += t2 * t2;
      s3 += t3 * t3;
    }
    if (s0 < minDist[v0]) {
      minDist[v0] = s0;
      nearest[v0] = c;
    }
    if (s1 < minDist[v1]) {
      minDist[v1] = s1;
      nearest[v1] = c;
    }
    if (s2 < minDist[v2]) {
      minDist[v2] = s2;
      nearest[v2] = c;
    }
    if (s3 < minDist[v3]) {
      minDist[v3] = s3;
      nearest[v3] = c;
    }
  }
  for (; i < count; i++) {
    const v = list[i];
    const dist = exactDistance(vectors, v * d, codewords, off, d);
    if (dist < minDist[v]) {
      minDist[v] = dist;
      nearest[v] = c;
    }
  }
}

/** Indices of the vectors a step must measure; one buffer per thread, grown as needed. */
let candidates = new Uint32Array(4096);

/** Runs seedUpdateRange over all N vectors for codeword c, where and however the caller likes. */
export type SeedUpdater = (c: number) => void | Promise<void>;

/**
 * k-means++ seeding (Arthur & Vassilvitskii, "k-means++: The Advantages of Careful
 * Seeding", SODA 2007): the first codeword uniformly at random, each next one a training
 * vector drawn with probability proportional to its squared distance to the nearest
 * codeword chosen so far. Weights are exact float64 distances summed in index order, so
 * the draw is reproducible. Returns codewords K × d, row-major.
 *
 * The distance updates (seedUpdateRange) may run elsewhere: `parallel` supplies the state
 * in memory it shares with its threads and the function that updates it; by default they
 * run here, on the calling thread. Either way the picks are the same.
 */
export async function initKmeansPlusPlus(
  vectors: Float32Array, d: number, k: number, rng: Rng, signal?: AbortSignal,
  parallel?: { state: SeedState; update: SeedUpdater },
): Promise<Float32Array> {
  const n = vectors.length / d;
  const state: SeedState = parallel?.state ?? {
    codewords: new Float32Array(k * d),
    minDist: new Float64Array(n),
    nearest: new Uint32Array(n),
    fromNewest: new Float64Array(k),
  };
  const update: SeedUpdater = parallel?.update ?? ((c) => seedUpdateRange(vectors, d, state, c, 0, n));
  const { codewords: out, minDist, nearest, fromNewest } = state;
  // Every vector starts infinitely far from codeword 0, so the first update sets them all.
  minDist.fill(Infinity);
  nearest.fill(0);
  fromNewest[0] = 0;
  let pick = rng.nextInt(n);
  out.set(vectors.subarray(pick * d, (pick + 1) * d), 0);
  await update(0);
  let lastYield = performance.now();
  for (let c = 1; c < k; c++) {
    // Updates on this thread: give the event loop a turn every ~20 ms. Either way, stop
    // promptly on cancellation.
    if (performance.now() - lastYield > 20) {
      await new Promise((resolve) => setImmediate(resolve));
      lastYield = performance.now();
    }
    if (signal?.aborted) throw abortError(signal);
    // total > 0: train() checked at the entry that at least K distinct vectors exist, and each
    // pick is a vector at positive distance from every earlier one (minDist 0 is skipped), so
    // fewer than K picks leave a vector at positive distance. No check is repeated here.
    let total = 0;
    for (let v = 0; v < n; v++) total += minDist[v];
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
    await update(c);
  }
  // A copy the caller owns, whatever memory the state lives in.
  return parallel ? out.slice() : out;
}

/**
 * 4 from the triangle inequality in squared form, times 1 + 1e-9: each float64 distance of
 * float32 vectors carries a relative error of at most about d·2⁻⁵³ (≈ 1e-14 for d = 768),
 * so a margin of 1e-9 leaves every skip exact.
 */
const PRUNE_FACTOR = 4 * (1 + 1e-9);
