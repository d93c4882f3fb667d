import { afterAll, describe, expect, it } from 'vitest';
import { accumulateCentroids, cellStatistics } from '../../../server/engine/core/accumulate-centroids';
import {
  SearchCrew, ShardState, bruteForceAssign, createRng, shardEnd, shardLayout, shardStart, shutdownEngineWorkers, train,
  type ShardExecutor, type ShardSums,
} from '../../../server/engine/training/index';
import { referenceKmeansPlusPlus } from '../../helpers/reference-kmeans-plus-plus';

afterAll(() => shutdownEngineWorkers());

const D = 4;

/** Clustered data: 12 centres with small spread, so that far codewords stay empty and must be repaired. */
function clustered(n: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const centres = Array.from({ length: 12 }, () => Array.from({ length: D }, () => rng.normal() * 10));
  const out = new Float32Array(n * D);
  for (let v = 0; v < n; v++) {
    const c = centres[Math.floor(rng.next() * centres.length)];
    for (let i = 0; i < D; i++) out[v * D + i] = c[i] + rng.normal() * (0.2 + (v % 7) * 0.1);
  }
  return out;
}

/** 16 codewords on training vectors, then 48 far from every vector: the far ones start empty. */
function startCodebook(vectors: Float32Array): Float32Array {
  const k = 64;
  const out = new Float32Array(k * D);
  for (let j = 0; j < 16; j++) out.set(vectors.subarray(j * 997 * D, j * 997 * D + D), j * D);
  for (let j = 16; j < k; j++) for (let i = 0; i < D; i++) out[j * D + i] = 1e4 + j * 10 + i;
  return out;
}

/**
 * Shards spread over several simulated machines, each with its own threads; after `loseAfter` passes the machine
 * holding shard 0 is lost and its shards are opened again on another one, which first repeats the last pass there
 * (as the job engine's coordinator does). Returns an executor for train's openShards.
 */
function spreadShards(vectors: Float32Array, machines: number, loseAfter: number, loseAtSeedStep = -1): ShardExecutor {
  const layout = shardLayout(vectors.length / D);
  const owner = Array.from({ length: layout.count }, (_, s) => s % machines);
  const states = new Map<number, ShardState>();
  const crews = new Map<number, SearchCrew>();
  let last: { codewords: Float32Array; k: number } | undefined;
  let passes = 0;
  const seedCodewords = new Float32Array(64 * D);
  const open = async (s: number, maxK: number) => {
    let state = states.get(s);
    if (state) return state;
    let crew = crews.get(owner[s]);
    if (!crew) {
      crew = await SearchCrew.open(1);
      crews.set(owner[s], crew);
    }
    state = await ShardState.open(vectors, D, layout, s, crew, maxK);
    states.set(s, state);
    if (last) await state.assign(last.codewords, last.k);
    return state;
  };
  const lose = (machine: number) => {
    for (let s = 0; s < layout.count; s++) {
      if (owner[s] !== machine) continue;
      states.get(s)?.close();
      states.delete(s);
      owner[s] = (machine + 1) % machines;
    }
    crews.get(machine)?.close();
    crews.delete(machine);
  };
  return {
    count: layout.count,
    // A shard opened again applies every codeword chosen so far (ShardSeeding.advance), as a host taking it over does.
    async seed(k, c, choice) {
      if (c === loseAtSeedStep) lose(owner[0]);
      let index: number;
      if ('index' in choice) index = choice.index;
      else {
        const chosen = (await open(choice.shard, 64)).seeding(k);
        await chosen.advance(seedCodewords, c);
        index = chosen.pick(choice.residual);
      }
      seedCodewords.set(vectors.subarray(index * D, (index + 1) * D), c * D);
      const totals = [];
      for (let s = 0; s < layout.count; s++) totals.push(await (await open(s, 64)).seeding(k).advance(seedCodewords, c + 1));
      return { index, totals };
    },
    async assign(codewords, k) {
      if (++passes === loseAfter) lose(owner[0]);
      const out = [];
      for (let s = 0; s < layout.count; s++) out.push(await (await open(s, 64)).assign(codewords, k));
      last = { codewords: codewords.slice(0, k * D), k };
      return out;
    },
    async members(cell, asks) {
      const out = [];
      for (const a of asks) out.push((await open(a.shard, 64)).members(cell, a.skip, a.take));
      return out;
    },
    async move(moves, k) {
      const out = new Map<number, ShardSums>();
      for (let s = 0; s < layout.count; s++) {
        if (moves.some((m) => m.index >= shardStart(layout, s) && m.index < shardEnd(layout, s))) out.set(s, await (await open(s, 64)).move(moves, k));
      }
      return out;
    },
    async splitSums(request) {
      const out = [];
      for (let s = 0; s < layout.count; s++) out.push((await open(s, 64)).splitSums(request));
      return out;
    },
    async close() {
      for (const state of states.values()) state.close();
      for (const crew of crews.values()) crew.close();
    },
  };
}

/**
 * The generalized Lloyd algorithm written out plainly over the whole set (brute-force float64 assignment, empty
 * cells re-seeded by the worst vector of the cell with the largest error), with the shard rule for the float64
 * sums: each shard's from zero in vector order, added in shard order.
 */
function plainLloyd(vectors: Float32Array, start: Float32Array, k: number, iterations: number): Float32Array {
  const n = vectors.length / D;
  const layout = shardLayout(n);
  const codewords = start.slice();
  for (let it = 0; it < iterations; it++) {
    const { indices, distances } = bruteForceAssign(vectors, D, codewords);
    const { usage, cellDistortion } = cellStatistics(indices, distances, k);
    for (let j = usage.indexOf(0); j >= 0; j = usage.indexOf(0)) {
      let donor = -1;
      for (let c = 0; c < k; c++) if (cellDistortion[c] > (donor < 0 ? 0 : cellDistortion[donor])) donor = c;
      let pick = -1;
      for (let v = 0; v < n; v++) if (indices[v] === donor && (pick < 0 || distances[v] > distances[pick])) pick = v;
      usage[donor]--;
      usage[j] = 1;
      cellDistortion[donor] = usage[donor] === 0 ? 0 : Math.max(0, cellDistortion[donor] - distances[pick]);
      cellDistortion[j] = 0;
      indices[pick] = j;
      distances[pick] = 0;
    }
    const total = new Float64Array(k * D);
    const seen = new Uint32Array(k);
    for (let s = 0; s < layout.count; s++) {
      const from = shardStart(layout, s);
      const part = new Float64Array(k * D);
      const counts = accumulateCentroids(vectors.subarray(from * D, shardEnd(layout, s) * D), D, indices.subarray(from, shardEnd(layout, s)), new Float32Array(k * D), k, part);
      for (let j = 0; j < k; j++) {
        if (counts[j] === 0) continue;
        for (let i = 0; i < D; i++) total[j * D + i] = seen[j] === 0 ? part[j * D + i] : total[j * D + i] + part[j * D + i];
        seen[j] += counts[j];
      }
    }
    for (let j = 0; j < k; j++) for (let i = 0; i < D; i++) codewords[j * D + i] = total[j * D + i] / usage[j];
  }
  return codewords;
}

describe('training over shards', () => {
  const vectors = clustered(3 * 16_384 + 1_000, 7);
  const start = startCodebook(vectors);
  const options = { k: 64, init: 'random' as const, initialCodewords: start, epsilon: 0, maxIterations: 6 };

  it('lays out shards by the number of vectors alone', () => {
    expect(shardLayout(1_000)).toEqual({ n: 1_000, size: 1_000, count: 1 });
    expect(shardLayout(3 * 16_384 + 1_000).count).toBe(3);
    expect(shardLayout(10_000_000).count).toBe(8);
  });

  it('gives the same codebook bit for bit on one thread, two threads and shards spread over machines that come and go', async () => {
    const one = await train(vectors, D, { ...options, threads: 1 });
    const two = await train(vectors, D, { ...options, threads: 2 });
    const spread = await train(vectors, D, { ...options, openShards: async () => spreadShards(vectors, 2, 2) });
    const trace = one.codebooks[0].trace;
    // The far codewords start empty: the repair across shards is exercised (48 moves from at most 12 donors over 3 shards: more than the first ask of 8 per shard).
    expect(trace[1].emptyRepaired).toBeGreaterThanOrEqual(48);
    const bytes = (r: typeof one) => Buffer.from(r.codebooks[0].codewords.buffer).toString('hex');
    expect(bytes(two)).toBe(bytes(one));
    expect(bytes(spread)).toBe(bytes(one));
    expect(spread.codebooks[0].trace.map((t) => t.distortion)).toEqual(trace.map((t) => t.distortion));
  });

  it('seeds by k-means++ bit for bit alike on one thread, two threads and machines lost mid-seeding, as the plain rule with the shard-order draw', async () => {
    const seeding = { k: 64, init: 'kmeans++' as const, seed: 5, maxIterations: 0 };
    const reference = referenceKmeansPlusPlus(vectors, D, 64, createRng(5));
    const bytes = (a: Float32Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength).toString('hex');
    const one = await train(vectors, D, { ...seeding, threads: 1 });
    const two = await train(vectors, D, { ...seeding, threads: 2 });
    const spread = await train(vectors, D, { ...seeding, openShards: async () => spreadShards(vectors, 2, -1, 20) });
    expect(bytes(one.codebooks[0].codewords)).toBe(bytes(reference));
    expect(bytes(two.codebooks[0].codewords)).toBe(bytes(reference));
    expect(bytes(spread.codebooks[0].codewords)).toBe(bytes(reference));
  });

  it('gives the same split-trained ladder bit for bit on one thread, two threads and shards spread over machines', async () => {
    // Every split asks the shards for its direction and halves' sums (ShardExecutor.splitSums), folded in shard order,
    // and so does every codeword shift (core/shift-cells.ts), whose choice reads only the folded statistics.
    const ladder = { k: 16, init: 'split' as const, epsilon: 1e-4, maxIterations: 30 };
    const one = await train(vectors, D, { ...ladder, threads: 1 });
    const two = await train(vectors, D, { ...ladder, threads: 2 });
    const spread = await train(vectors, D, { ...ladder, openShards: async () => spreadShards(vectors, 2, 5) });
    const bytes = (r: typeof one) => r.codebooks.map((b) => Buffer.from(b.codewords.buffer).toString('hex'));
    expect(one.codebooks.map((b) => b.size)).toEqual([1, 2, 4, 8, 16]);
    expect(bytes(two)).toEqual(bytes(one));
    expect(bytes(spread)).toEqual(bytes(one));
    expect(one.codebooks.some((b) => b.trace.some((t) => t.shifted !== undefined))).toBe(true);
  });

  it('equals the plainly written Lloyd iteration with the shard rule for the sums', async () => {
    const iterations = 4;
    const result = await train(vectors, D, { ...options, maxIterations: iterations, threads: 2 });
    expect(result.codebooks[0].iterations).toBe(iterations);
    expect(Array.from(result.codebooks[0].codewords)).toEqual(Array.from(plainLloyd(vectors, start, 64, iterations)));
  });
});
