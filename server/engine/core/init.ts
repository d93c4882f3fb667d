import { abortError } from './errors';
import { exactDistance } from './exact-distance';
import type { Rng } from './rng';
import { shardEnd, shardLayout, shardStart } from './shard-layout';
import type { ShardExecutor } from './types';

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
 * Brings a shard's vectors up to date with codeword c, the newest, and returns their D² total, the float64 sum in
 * vector order that ShardSeeding reports, formed in the same pass. A vector moves to c when c is strictly nearer.
 * Three tests skip vectors whose D² cannot change, each exact, so the state is that of the unpruned rule, bit for bit:
 * - a new codeword at least twice as far from a vector's nearest one as the vector is cannot come closer to it
 *   (triangle inequality: ‖x − c'‖ ≥ ‖c − c'‖ − ‖x − c‖ ≥ ‖x − c‖), applied with PRUNE_FACTOR's margin;
 * - ‖x − c‖ ≥ |‖x‖ − ‖c‖| (triangle inequality), with NORM_MARGIN for the norms' rounding;
 * - the distance of the vectors left stops once its partial sum reaches the vector's D²: a float64 sum of
 *   non-negative terms never decreases, so the whole would not have replaced it.
 * Each vector depends only on itself and the codewords. `norms` holds ‖x‖ of every vector (vectorNormsInto).
 * wasm/seed-kernel.ts (assembly/assign-nearest.ts seedStep) computes the same, operation for operation, for the shards
 * seeded on the calling thread; a change to the rule here is a change there (tests/unit/engine-core/seed-kernel.test.ts).
 */
export function seedUpdateWithTotal(vectors: Float32Array, d: number, state: SeedState, norms: Float64Array, c: number): number {
  const { codewords, minDist, nearest, fromNewest } = state;
  const n = minDist.length;
  const off = c * d;
  const normC = codewordNorm(codewords, c, d);
  const whole = d - (d % 4);
  let total = 0;
  for (let v = 0; v < n; v++) {
    let m = minDist[v];
    if (m !== 0 && !(fromNewest[nearest[v]] > PRUNE_FACTOR * m)) {
      const nx = norms[v];
      const gap = Math.abs(nx - normC) - NORM_MARGIN * (nx + normC);
      if (!(gap > 0 && gap * gap > m * (1 + NORM_MARGIN))) {
        const base = v * d;
        let s = 0;
        let j = 0;
        for (; j < whole; j += 4) {
          const t0 = vectors[base + j] - codewords[off + j];
          const t1 = vectors[base + j + 1] - codewords[off + j + 1];
          const t2 = vectors[base + j + 2] - codewords[off + j + 2];
          const t3 = vectors[base + j + 3] - codewords[off + j + 3];
          s += t0 * t0;
          s += t1 * t1;
          s += t2 * t2;
          s += t3 * t3;
          if (s >= m) break;
        }
        if (j >= whole) {
          for (; j < d; j++) {
            const t = vectors[base + j] - codewords[off + j];
            s += t * t;
          }
        }
        if (s < m) {
          m = s;
          minDist[v] = s;
          nearest[v] = c;
        }
      }
    }
    total += m;
  }
  return total;
}

/** ‖x‖ of every vector (vectors n × d) into out (n), for seedUpdateWithTotal's norm test. */
export function vectorNormsInto(vectors: Float32Array, d: number, out: Float64Array): void {
  const n = vectors.length / d;
  for (let v = 0; v < n; v++) out[v] = Math.sqrt(exactSquaredNorm(vectors, v * d, d));
}

/** ‖c‖ of codeword c (codewords K × d), as seedUpdateWithTotal's norm test takes it. */
export function codewordNorm(codewords: Float32Array, c: number, d: number): number {
  return Math.sqrt(exactSquaredNorm(codewords, c * d, d));
}

/** Σ x_i² in float64, in index order (each square of a float32 value is exact in float64). */
function exactSquaredNorm(a: Float32Array, offset: number, d: number): number {
  let s = 0;
  for (let i = 0; i < d; i++) s += a[offset + i] * a[offset + i];
  return s;
}

/**
 * Runs seedUpdateWithTotal over all of a shard's vectors for codeword c, where the caller likes, and returns the
 * shard's D² total it formed.
 */
export type SeedUpdater = (c: number) => number | Promise<number>;

/** Squared distances from codeword c to codewords 0 … c − 1 (codewords K × d), into out[0 … c). */
export function distancesToNewest(codewords: Float32Array, c: number, d: number, out: Float64Array): void {
  for (let j = 0; j < c; j++) out[j] = exactDistance(codewords, j * d, codewords, c * d, d);
}

/** A k-means++ state over `n` vectors on the calling thread. */
export function plainSeedState(n: number, k: number, d: number): SeedState {
  return { codewords: new Float32Array(k * d), minDist: new Float64Array(n), nearest: new Uint32Array(n), fromNewest: new Float64Array(k) };
}

/**
 * One shard's part of k-means++ seeding: the D² (squared distance to the nearest codeword chosen so far) of its
 * vectors, whole-set indices [offset, offset + n). It applies the codewords in the order chosen, so a shard opened
 * again elsewhere (its host was lost) reaches the same state by applying them all again, and it reports its total,
 * a float64 sum formed in vector order. `update` runs seedUpdateWithTotal over the shard's vectors (on the calling
 * thread or on threads sharing `state`); each vector depends only on itself, so where it runs changes nothing.
 */
export class ShardSeeding {
  /** Codewords applied so far. */
  private applied = 0;
  private total = 0;

  constructor(
    private readonly state: SeedState,
    private readonly update: SeedUpdater,
    readonly offset: number,
    private readonly d: number,
  ) {
    state.minDist.fill(Infinity);
    state.nearest.fill(0);
  }

  /** Seeding on the calling thread over `vectors` (n × d, the shard's own), whose first is vector `offset` of the set. */
  static plain(vectors: Float32Array, d: number, k: number, offset: number): ShardSeeding {
    const n = vectors.length / d;
    const state = plainSeedState(n, k, d);
    const norms = new Float64Array(n);
    vectorNormsInto(vectors, d, norms);
    return new ShardSeeding(state, (c) => seedUpdateWithTotal(vectors, d, state, norms, c), offset, d);
  }

  /**
   * Brings the D² up to date with codewords [0, count) (K × d, the whole seeding's so far) and returns the shard's
   * total. `fromNewest`, when given, holds the distances of codeword count − 1 to the earlier ones (the caller
   * computed them once for all its shards). A count already applied returns the same total again.
   */
  async advance(codewords: Float32Array, count: number, fromNewest?: Float64Array): Promise<number> {
    const { d, state } = this;
    if (count < this.applied) {
      // A seeding started over: nothing of the old one is kept.
      state.minDist.fill(Infinity);
      state.nearest.fill(0);
      this.applied = 0;
      this.total = 0;
    }
    for (let c = this.applied; c < count; c++) {
      state.codewords.set(codewords.subarray(c * d, (c + 1) * d), c * d);
      if (fromNewest && c === count - 1) state.fromNewest.set(fromNewest.subarray(0, c));
      else distancesToNewest(state.codewords, c, d, state.fromNewest);
      this.total = await this.update(c);
      this.applied = c + 1;
    }
    return this.total;
  }

  /**
   * The vector (whole-set index) at which the running D² sum of this shard, in vector order and skipping vectors at
   * distance 0, first exceeds `residual`; the last positive one when rounding carries the residual past the total.
   * The caller draws only from a shard whose total is positive.
   */
  pick(residual: number): number {
    const { minDist } = this.state;
    let acc = 0;
    // With no vector at positive distance (only when fewer distinct vectors than K, which the entry refuses) the
    // shard's last vector: a repeat, never a read outside the set.
    let pick = minDist.length - 1;
    for (let v = 0; v < minDist.length; v++) {
      if (minDist[v] === 0) continue;
      acc += minDist[v];
      pick = v;
      if (acc > residual) break;
    }
    return this.offset + pick;
  }
}

/**
 * The shard-order draw: the shard whose running total (shard totals added in shard order) first exceeds `target`,
 * and what is left of the target within it. Shards at total 0 are never chosen; rounding that carries the target
 * past every total chooses the last positive shard.
 */
export function drawShard(totals: readonly number[], target: number): { shard: number; residual: number } {
  let acc = 0;
  // Every total 0 happens only with fewer distinct vectors than K (refused at the entry): the last shard, never -1.
  let shard = totals.length - 1;
  let before = 0;
  for (let s = 0; s < totals.length; s++) {
    if (totals[s] === 0) continue;
    shard = s;
    before = acc;
    acc += totals[s];
    if (acc > target) break;
  }
  return { shard, residual: target - before };
}

/**
 * k-means++ seeding (Arthur & Vassilvitskii, "k-means++: The Advantages of Careful Seeding", SODA 2007): the first
 * codeword uniformly at random, each next one a training vector drawn with probability proportional to its squared
 * distance to the nearest codeword chosen so far.
 *
 * The D² live in the training set's shards (core/shard-layout.ts), wherever they are computed: after each new
 * codeword every shard updates its own and reports its total (float64, summed in vector order); the total of the
 * set is those added in shard order, the draw picks the shard by the same running sum (drawShard), and that shard
 * finds the vector within itself (ShardSeeding.pick). The rule depends only on the shard layout, which depends on N
 * alone, so the codewords are the same bits in one process or over any number of machines. With one shard it is
 * the textbook draw over the whole set in index order. Returns codewords K × d, row-major.
 */
export async function seedOverShards(
  vectors: Float32Array, d: number, k: number, rng: Rng, shards: Pick<ShardExecutor, 'seed'>, signal?: AbortSignal,
): Promise<Float32Array> {
  const n = vectors.length / d;
  const out = new Float32Array(k * d);
  let step = await shards.seed(k, 0, { index: rng.nextInt(n) }, signal);
  out.set(vectors.subarray(step.index * d, (step.index + 1) * d), 0);
  let lastYield = performance.now();
  for (let c = 1; c < k; c++) {
    // Steps on this thread: give the event loop a turn every ~20 ms. Either way, stop promptly on cancellation.
    if (performance.now() - lastYield > 20) {
      await new Promise((resolve) => setImmediate(resolve));
      lastYield = performance.now();
    }
    if (signal?.aborted) throw abortError(signal);
    // total > 0: train() checked at the entry that at least K distinct vectors exist, and each pick is a vector at
    // positive distance from every earlier one (distance 0 is skipped), so fewer than K picks leave a vector at
    // positive distance. No check is repeated here.
    let total = 0;
    for (const t of step.totals) total += t;
    step = await shards.seed(k, c, drawShard(step.totals, rng.next() * total), signal);
    out.set(vectors.subarray(step.index * d, (step.index + 1) * d), c * d);
  }
  return out;
}

/**
 * The seeding steps of the training set's shards, all on the calling thread (seedOverShards' ShardExecutor.seed
 * for callers that have no executor: the rule and its layout are the same).
 */
export function plainSeedShards(vectors: Float32Array, d: number, k: number): Pick<ShardExecutor, 'seed'> {
  const layout = shardLayout(vectors.length / d);
  const shards = Array.from({ length: layout.count }, (_, s) => {
    const seeding = ShardSeeding.plain(vectors.subarray(shardStart(layout, s) * d, shardEnd(layout, s) * d), d, k, shardStart(layout, s));
    return { seeding: () => seeding };
  });
  return seedSteps(vectors, d, k, shards);
}

/**
 * ShardExecutor.seed over shards held here, in shard order: the chosen shard (up to date with the codewords before
 * this one) picks, then every shard applies the new codeword. The distances of the new codeword to the earlier
 * ones are computed once for all shards.
 */
export function seedSteps(
  vectors: Float32Array, d: number, maxK: number, shards: readonly { seeding(k: number): ShardSeeding | Promise<ShardSeeding> }[],
): Pick<ShardExecutor, 'seed'> {
  const codewords = new Float32Array(maxK * d);
  const fromNewest = new Float64Array(maxK);
  return {
    async seed(k, c, choice, signal) {
      let index: number;
      if ('index' in choice) index = choice.index;
      else {
        const chosen = await shards[choice.shard].seeding(k);
        await chosen.advance(codewords, c);
        index = chosen.pick(choice.residual);
      }
      codewords.set(vectors.subarray(index * d, (index + 1) * d), c * d);
      distancesToNewest(codewords, c, d, fromNewest);
      if (signal?.aborted) throw abortError(signal);
      // Side by side: a shard whose steps run on worker threads waits only for its own (NearestSearch.seeding).
      // Every shard is awaited, even after a failure, so that none is left writing into its state.
      const replies = await Promise.allSettled(shards.map(async (shard) => (await shard.seeding(k)).advance(codewords, c + 1, fromNewest)));
      const failed = replies.find((r) => r.status === 'rejected');
      if (failed) throw (failed as PromiseRejectedResult).reason;
      if (signal?.aborted) throw abortError(signal);
      return { index, totals: replies.map((r) => (r as PromiseFulfilledResult<number>).value) };
    },
  };
}

/** k-means++ seeding of the whole set on the calling thread: seedOverShards over plainSeedShards. */
export async function initKmeansPlusPlus(vectors: Float32Array, d: number, k: number, rng: Rng, signal?: AbortSignal): Promise<Float32Array> {
  return seedOverShards(vectors, d, k, rng, plainSeedShards(vectors, d, k), signal);
}

/**
 * 4 from the triangle inequality in squared form, times 1 + 1e-9: each float64 distance of
 * float32 vectors carries a relative error of at most about d·2⁻⁵³ (≈ 1e-14 for d = 768),
 * so a margin of 1e-9 leaves every skip exact.
 */
export const PRUNE_FACTOR = 4 * (1 + 1e-9);

/**
 * Relative slack of the norm test. A norm computed in float64 from float32 components is within about (d + 2)·2⁻⁵³
 * of ‖x‖ (below 1e-12 for d ≤ 4096), and so is a distance's sum; 1e-9 keeps the bound |‖x‖ − ‖c‖| − slack below the
 * true distance and its square above the D² it is compared with only when the measured distance would be too.
 */
export const NORM_MARGIN = 1e-9;
