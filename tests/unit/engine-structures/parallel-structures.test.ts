import { createHash } from 'node:crypto';
import { afterAll, describe, expect, it } from 'vitest';
import { EcvqShardState } from '../../../server/engine/core/entropy-constrained';
import { exactDistance } from '../../../server/engine/core/exact-distance';
import { huffmanCodeLengths } from '../../../server/engine/core/huffman';
import type { EcvqPassRequest, EcvqShardPass, EcvqShards, ShardSums, TreeShards } from '../../../server/engine/core/types';
import { splitStart, trainTree } from '../../../server/engine/structures/tree';
import { TreeShardState } from '../../../server/engine/structures/tree-shards';
import { trainEcvq } from '../../../server/engine/training/ecvq';
import {
  createRng, shardEnd, shardLayout, shardStart, shutdownEngineWorkers, train,
} from '../../../server/engine/training/index';

afterAll(() => shutdownEngineWorkers());

const D = 4;
/** Three shards of the fixed layout (core/shard-layout.ts: at least 16,384 vectors a shard). */
const N = 3 * 16_384 + 1_000;

/** Gauss–Markov rows (a = 0.9): correlated like image blocks, so cells differ in size and λ empties some. */
function gaussMarkov(n: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * D);
  for (let v = 0; v < n; v++) {
    let p = rng.normal();
    out[v * D] = p;
    for (let i = 1; i < D; i++) {
      p = 0.9 * p + Math.sqrt(1 - 0.81) * rng.normal();
      out[v * D + i] = p;
    }
  }
  return out;
}

const checksum = (a: ArrayBufferView) => createHash('sha256').update(Buffer.from(a.buffer, a.byteOffset, a.byteLength)).digest('hex');

/**
 * The shards spread over `hosts` simulated machines, each with its own state per shard (core EcvqShardState, what a
 * worker's ShardState holds for these passes); after `loseAfter` passes the host of shard 0 is lost and its shards are
 * opened afresh on the next host, without the search hints they had.
 */
function spreadEcvq(vectors: Float32Array, hosts: number, loseAfter = -1): EcvqShards & { passes: number } {
  const layout = shardLayout(vectors.length / D);
  const owner = Array.from({ length: layout.count }, (_, s) => Math.floor((s * hosts) / layout.count));
  const states = new Map<number, EcvqShardState>();
  const open = (s: number) => {
    let state = states.get(s);
    if (!state) {
      state = new EcvqShardState(vectors.subarray(shardStart(layout, s) * D, shardEnd(layout, s) * D), D);
      states.set(s, state);
    }
    return state;
  };
  const out = {
    count: layout.count,
    passes: 0,
    async ecvqPass(request: EcvqPassRequest) {
      if (++out.passes === loseAfter) {
        const lost = owner[0];
        for (let s = 0; s < layout.count; s++) {
          if (owner[s] !== lost) continue;
          states.delete(s);
          owner[s] = (lost + 1) % hosts;
        }
      }
      // Hosts answer in any order; the training folds the answers in shard order.
      const order = Array.from({ length: layout.count }, (_, s) => layout.count - 1 - s);
      const parts = new Array<EcvqShardPass>(layout.count);
      for (const s of order) parts[s] = open(s).pass(request);
      return parts;
    },
    async close() {},
  };
  return out;
}

/**
 * Entropy-constrained training written out plainly over the whole set (Chou, Lookabaugh & Gray 1989: a float64 full
 * search of ‖x − c_j‖² + λ·ℓ_j, ties to the lowest index; empty cells dropped; centroids; ℓ_j = −log2 p_j), with
 * the shard rule for the float64 sums: each shard's from zero in vector order, added in shard order.
 */
function plainEcvq(vectors: Float32Array, start: Float32Array, lambda: number, updates: number) {
  const n = vectors.length / D;
  const layout = shardLayout(n);
  let codewords = start.slice();
  let lengths = new Float64Array(start.length / D).fill(Math.log2(start.length / D));
  for (let t = 0; ; t++) {
    const k = lengths.length;
    const indices = new Uint32Array(n);
    for (let v = 0; v < n; v++) {
      let best = Infinity;
      for (let j = 0; j < k; j++) {
        const cost = exactDistance(vectors, v * D, codewords, j * D, D) + lambda * lengths[j];
        if (cost < best) {
          best = cost;
          indices[v] = j;
        }
      }
    }
    const counts = new Uint32Array(k);
    for (const j of indices) counts[j]++;
    const keep = Array.from({ length: k }, (_, j) => j).filter((j) => counts[j] > 0);
    if (t === updates) {
      const out = new Float32Array(keep.length * D);
      keep.forEach((j, at) => out.set(codewords.subarray(j * D, j * D + D), at * D));
      return { codewords: out, usage: Uint32Array.from(keep, (j) => counts[j]) };
    }
    const total = new Float64Array(k * D);
    const seen = new Uint32Array(k);
    for (let s = 0; s < layout.count; s++) {
      const part = new Float64Array(k * D);
      const partCounts = new Uint32Array(k);
      for (let v = shardStart(layout, s); v < shardEnd(layout, s); v++) {
        partCounts[indices[v]]++;
        for (let i = 0; i < D; i++) part[indices[v] * D + i] += vectors[v * D + i];
      }
      for (let j = 0; j < k; j++) {
        if (partCounts[j] === 0) continue;
        for (let i = 0; i < D; i++) total[j * D + i] = seen[j] === 0 ? part[j * D + i] : total[j * D + i] + part[j * D + i];
        seen[j] += partCounts[j];
      }
    }
    const next = new Float32Array(keep.length * D);
    keep.forEach((j, at) => {
      for (let i = 0; i < D; i++) next[at * D + i] = total[j * D + i] / counts[j];
    });
    codewords = next;
    lengths = Float64Array.from(keep, (j) => -Math.log2(counts[j] / n));
  }
}

describe('entropy-constrained training over shards', () => {
  const vectors = gaussMarkov(N, 21);
  // 48 training vectors as the starting codebook: λ then empties some cells within the first iterations.
  const start = new Float32Array(48 * D);
  for (let j = 0; j < 48; j++) start.set(vectors.subarray(j * 1_009 * D, j * 1_009 * D + D), j * D);
  const options = { lambda: 0.4, epsilon: 0, maxIterations: 5 };

  it('gives the same codewords and Huffman lengths bit for bit with its shards on one, two or three hosts, and after a host is lost', async () => {
    expect(shardLayout(N).count).toBe(3);
    const here = await trainEcvq(vectors, D, start, options);
    // λ dropped cells: the compaction between iterations is exercised.
    expect(here.size).toBeLessThan(48);
    for (const [hosts, lose] of [[1, -1], [2, -1], [3, 3]]) {
      const spread = spreadEcvq(vectors, hosts, lose);
      const r = await trainEcvq(vectors, D, start, { ...options, openShards: async () => spread });
      expect(spread.passes).toBe(here.trace.length);
      expect(checksum(r.codewords)).toBe(checksum(here.codewords));
      expect(Array.from(r.codeLengths)).toEqual(Array.from(here.codeLengths));
      expect(r.trace.map((t) => t.lagrangian)).toEqual(here.trace.map((t) => t.lagrangian));
    }
  });

  it('equals the plainly written iteration with the shard rule for the sums', async () => {
    const r = await trainEcvq(vectors, D, start, options);
    expect(r.stop).toBe('max-iterations');
    const plain = plainEcvq(vectors, start, options.lambda, r.iterations);
    expect(checksum(r.codewords)).toBe(checksum(plain.codewords));
    expect(Array.from(r.usage)).toEqual(Array.from(plain.usage));
    expect(Array.from(r.codeLengths)).toEqual(Array.from(huffmanCodeLengths(plain.usage, 16)));
  });
});

/**
 * The tree's shards spread over `hosts` simulated machines (a TreeShardState per shard, what a worker keeps); after
 * `loseAfter` commits the host of shard 0 is lost and its shards are rebuilt on the next host from the commits so far.
 */
function spreadTree(vectors: Float32Array, hosts: number, loseAfter = -1): TreeShards & { commits: number } {
  const layout = shardLayout(vectors.length / D);
  const owner = Array.from({ length: layout.count }, (_, s) => Math.floor((s * hosts) / layout.count));
  const states = new Map<number, TreeShardState>();
  const log: { node: number; codewords: Float32Array; left: number; right: number }[] = [];
  const open = (s: number) => {
    let state = states.get(s);
    if (!state) {
      state = TreeShardState.of(vectors, D, layout, s);
      for (const c of log) state.commit(c.node, c.codewords, c.left, c.right);
      states.set(s, state);
    }
    return state;
  };
  const all = Array.from({ length: layout.count }, (_, s) => s);
  const out = {
    count: layout.count,
    commits: 0,
    async nodeAssign(node: number, codewords: Float32Array, k: number) {
      return all.map((s) => open(s).assign(node, codewords, k));
    },
    async nodeMembers(node: number, cell: number, asks: readonly { shard: number; skip: number; take: number }[]) {
      return asks.map((a) => open(a.shard).members(node, cell, a.skip, a.take));
    },
    async nodeMove(node: number, moves: readonly { index: number; cell: number }[], k: number) {
      const sums = new Map<number, ShardSums>();
      for (const s of all) if (moves.some((m) => open(s).holds(m.index))) sums.set(s, open(s).move(node, moves, k));
      return sums;
    },
    async commitSplit(node: number, codewords: Float32Array, left: number, right: number) {
      log.push({ node, codewords: codewords.slice(), left, right });
      const rows = all.map((s) => open(s).commit(node, codewords, left, right));
      if (++out.commits === loseAfter) {
        const lost = owner[0];
        for (const s of all) {
          if (owner[s] !== lost) continue;
          states.delete(s);
          owner[s] = (lost + 1) % hosts;
        }
      }
      return rows;
    },
    async close() {},
  };
  return out;
}

describe('tree training over shards', () => {
  const vectors = gaussMarkov(N, 5);
  const bytes = (r: { codewords: Float32Array; structure: { children: Int32Array } }) => checksum(r.codewords) + checksum(r.structure.children);
  const lloyd = { seed: 9, epsilon: 1e-4, maxIterations: 12 };

  it('splits the root of a three-shard set by the same bits as the Lloyd engine trains two codewords from that start', async () => {
    const tree = await trainTree(vectors, D, { growth: { kind: 'balanced', depth: 1 }, ...lloyd });
    const root = tree.codewords.subarray(0, D);
    let error = 0;
    for (let v = 0; v < N; v++) error += exactDistance(vectors, v * D, root, 0, D);
    const start = splitStart(root, error, N, D, lloyd.seed, 1, 0.01);
    const book = (await train(vectors, D, { k: 2, init: 'random', initialCodewords: start, epsilon: lloyd.epsilon, maxIterations: lloyd.maxIterations })).codebooks[0];
    expect(tree.iterations).toBe(book.iterations);
    expect(checksum(tree.codewords.slice(D))).toBe(checksum(book.codewords));
    expect(Array.from(tree.usage.subarray(1))).toEqual(Array.from(book.usage));
  });

  it('grows the same balanced tree bit for bit with its shards on one, two or three hosts, and after a host is lost', async () => {
    const growth = { kind: 'balanced' as const, depth: 4 };
    const here = await trainTree(vectors, D, { growth, ...lloyd });
    for (const [hosts, lose] of [[1, -1], [2, -1], [3, 5]]) {
      const spread = spreadTree(vectors, hosts, lose);
      const r = await trainTree(vectors, D, { growth, ...lloyd, openShards: async () => spread });
      expect(spread.commits).toBe(15);
      expect(bytes(r)).toBe(bytes(here));
      expect(r.treeDistortion).toBe(here.treeDistortion);
    }
  });

  it('grows and prunes the same greedy tree bit for bit with its shards on one, two or three hosts, and after a host is lost', async () => {
    const opts = { growth: { kind: 'greedy' as const, leaves: 24 }, prune: { rate: 3.5 }, ...lloyd };
    const here = await trainTree(vectors, D, opts);
    expect(here.structure.balanced).toBe(false);
    for (const [hosts, lose] of [[1, -1], [2, 7], [3, 11]]) {
      const spread = spreadTree(vectors, hosts, lose);
      const r = await trainTree(vectors, D, { ...opts, openShards: async () => spread });
      expect(spread.commits).toBe(23);
      expect(bytes(r)).toBe(bytes(here));
      expect(r.growth).toEqual(here.growth);
      expect(r.pruning).toEqual(here.pruning);
    }
  });
});
