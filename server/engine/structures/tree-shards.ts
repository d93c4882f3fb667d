import { addRow } from '../core/accumulate-centroids';
import { EngineError, throwIfAborted } from '../core/errors';
import { exactDistance } from '../core/exact-distance';
import { shardEnd, shardLayout, shardStart, type ShardLayout } from '../core/shard-layout';
import type { CellMember, LloydShards, ShardAssignment, ShardMove, ShardSums, TreeShards } from '../core/types';

/**
 * Up to two distinct vectors of one side of a committed split in one shard (0, 1 or 2 rows of d): the grower counts
 * the distinct vectors of a node across shards from these, to know whether it can split at all.
 */
export type DistinctRows = Float32Array;

/**
 * One shard of a training set as a tree grows on it: which node each of its vectors has reached (per node, the
 * shard's vectors there in ascending order) and the last 2-means pass of a node. Searches are brute force with exact
 * float64 distances (core/exact-distance.ts), lowest index on ties, and every partial is formed from zero in vector
 * order (the shard rule of core/shard-fold.ts), so what it returns depends only on its vectors, the codewords and the
 * splits committed, never on which process holds it.
 */
export class TreeShardState {
  /** Node → the shard's vectors that reached it (local indices, ascending); leaves only. */
  private readonly lists = new Map<number, Uint32Array>();
  /**
   * Node → those vectors themselves, contiguous in list order (count × d): a node's passes read them in order
   * instead of gathering rows across the shard (three times faster on a deep tree of 100,000 vectors).
   */
  private readonly rows = new Map<number, Float32Array>();
  private pass?: { node: number; indices: Uint32Array; distances: Float64Array };

  /**
   * @param offset  index of the shard's first vector in the whole training set
   * @param vectors the shard's vectors, n × d
   */
  constructor(readonly offset: number, private readonly vectors: Float32Array, private readonly d: number) {
    const n = vectors.length / d;
    this.lists.set(0, Uint32Array.from({ length: n }, (_, v) => v));
    this.rows.set(0, vectors);
  }

  /** Shard s of `vectors` (the whole training set, N × d) in `layout`. */
  static of(vectors: Float32Array, d: number, layout: ShardLayout, s: number): TreeShardState {
    const start = shardStart(layout, s);
    return new TreeShardState(start, vectors.subarray(start * d, shardEnd(layout, s) * d), d);
  }

  private listOf(node: number): Uint32Array {
    const list = this.lists.get(node);
    if (!list) throw new EngineError('ENGINE_INVALID_INPUT', `tree node ${node} is not a leaf here`, { node });
    return list;
  }

  private passOf(node: number): { indices: Uint32Array; distances: Float64Array } {
    if (this.pass?.node !== node) throw new EngineError('ENGINE_INVALID_INPUT', `tree node ${node} has had no pass here`, { node });
    return this.pass;
  }

  private sums(node: number, indices: Uint32Array, k: number): ShardSums {
    const { d } = this;
    const rows = this.rows.get(node)!;
    const counts = new Uint32Array(k);
    const sums = new Float64Array(k * d);
    for (let m = 0; m < indices.length; m++) {
      counts[indices[m]]++;
      addRow(sums, indices[m] * d, rows, m * d, d);
    }
    return { counts, sums };
  }

  /** A nearest-of-K pass (codewords K × d) of the node's vectors here: statistics and centroid sums. */
  assign(node: number, codewords: Float32Array, k: number): ShardAssignment {
    const { d } = this;
    const list = this.listOf(node);
    const rows = this.rows.get(node)!;
    const indices = new Uint32Array(list.length);
    const distances = new Float64Array(list.length);
    const cellDistortion = new Float64Array(k);
    let total = 0;
    for (let m = 0; m < list.length; m++) {
      const vo = m * d;
      let best = Infinity;
      let bj = 0;
      for (let j = 0; j < k; j++) {
        const dist = exactDistance(rows, vo, codewords, j * d, d);
        if (dist < best) {
          best = dist;
          bj = j;
        }
      }
      indices[m] = bj;
      distances[m] = best;
      cellDistortion[bj] += best;
      total += best;
    }
    this.pass = { node, indices, distances };
    return { ...this.sums(node, indices, k), cellDistortion, total, redecided: 0, searched: list.length };
  }

  /** The node's last pass's members of `cell` here, worst first (largest distance, lowest index on ties), from `skip`, at most `take`. */
  members(node: number, cell: number, skip: number, take: number): CellMember[] {
    const list = this.listOf(node);
    const { indices, distances } = this.passOf(node);
    const out: CellMember[] = [];
    for (let m = 0; m < list.length; m++) if (indices[m] === cell) out.push({ index: this.offset + list[m], distance: distances[m] });
    out.sort((a, b) => b.distance - a.distance || a.index - b.index);
    return out.slice(skip, skip + take);
  }

  /** Whether a vector of the whole training set is this shard's. */
  holds(index: number): boolean {
    return index >= this.offset && index < this.offset + this.vectors.length / this.d;
  }

  /** Applies the moves that fall here to the node's last pass; the new centroid sums. */
  move(node: number, moves: readonly ShardMove[], k: number): ShardSums {
    const list = this.listOf(node);
    const { indices, distances } = this.passOf(node);
    for (const mv of moves) {
      if (!this.holds(mv.index)) continue;
      const local = mv.index - this.offset;
      // Lists are ascending: the vector's place in the node's list by binary search.
      let lo = 0;
      let hi = list.length;
      while (lo < hi) {
        const mid = (lo + hi) >>> 1;
        if (list[mid] < local) lo = mid + 1;
        else hi = mid;
      }
      if (list[lo] !== local) throw new EngineError('ENGINE_INVALID_INPUT', `vector ${mv.index} is not in tree node ${node}`, { node, index: mv.index });
      indices[lo] = mv.cell;
      distances[lo] = 0;
    }
    return this.sums(node, indices, k);
  }

  /**
   * The node's vectors go to `left` or `right` by the nearer of codewords (2 × d; exact float64, left on ties).
   * Returns, per side, up to two distinct vectors that went there.
   */
  commit(node: number, codewords: Float32Array, left: number, right: number): [DistinctRows, DistinctRows] {
    const { d } = this;
    const list = this.listOf(node);
    const rows = this.rows.get(node)!;
    const side = new Uint8Array(list.length);
    let rights = 0;
    for (let m = 0; m < list.length; m++) {
      const vo = m * d;
      side[m] = exactDistance(rows, vo, codewords, d, d) < exactDistance(rows, vo, codewords, 0, d) ? 1 : 0;
      rights += side[m];
    }
    const lists = [new Uint32Array(list.length - rights), new Uint32Array(rights)];
    const blocks = [new Float32Array((list.length - rights) * d), new Float32Array(rights * d)];
    const at = [0, 0];
    for (let m = 0; m < list.length; m++) {
      const s = side[m];
      lists[s][at[s]] = list[m];
      blocks[s].set(rows.subarray(m * d, m * d + d), at[s] * d);
      at[s]++;
    }
    this.lists.delete(node);
    this.rows.delete(node);
    if (this.pass?.node === node) this.pass = undefined;
    this.lists.set(left, lists[0]);
    this.rows.set(left, blocks[0]);
    this.lists.set(right, lists[1]);
    this.rows.set(right, blocks[1]);
    return [distinct(blocks[0], d), distinct(blocks[1], d)];
  }
}

/** Up to two distinct rows of a block (count × d): the first, and the first that differs from it. */
function distinct(block: Float32Array, d: number): DistinctRows {
  if (block.length === 0) return new Float32Array(0);
  for (let o = d; o < block.length; o += d) {
    for (let i = 0; i < d; i++) {
      if (block[o + i] !== block[i]) {
        const out = new Float32Array(2 * d);
        out.set(block.subarray(0, d), 0);
        out.set(block.subarray(o, o + d), d);
        return out;
      }
    }
  }
  return block.slice(0, d);
}

/** Whether the rows (each shard's, in shard order, d components each) hold at least two distinct vectors. */
export function twoDistinct(parts: readonly DistinctRows[], d: number): boolean {
  let first: Float32Array | undefined;
  for (const rows of parts) {
    for (let o = 0; o < rows.length; o += d) {
      const row = rows.subarray(o, o + d);
      if (!first) first = row;
      else if (row.some((x, i) => x !== first![i])) return true;
    }
  }
  return false;
}

/**
 * Every shard of a training set in this process, one after another on this thread: the same shard layout as the
 * Lloyd engine's (core/shard-layout.ts), so the same partials as the job engine's workers compute.
 */
export function openLocalTreeShards(vectors: Float32Array, d: number): TreeShards {
  const layout = shardLayout(vectors.length / d);
  const shards = Array.from({ length: layout.count }, (_, s) => TreeShardState.of(vectors, d, layout, s));
  const each = async <T>(signal: AbortSignal | undefined, f: (shard: TreeShardState) => T): Promise<T[]> => {
    const out: T[] = [];
    for (const shard of shards) {
      throwIfAborted(signal);
      out.push(f(shard));
    }
    return out;
  };
  return {
    count: layout.count,
    nodeAssign: (node, codewords, k, signal) => each(signal, (shard) => shard.assign(node, codewords, k)),
    async nodeMembers(node, cell, asks) {
      return asks.map((a) => shards[a.shard].members(node, cell, a.skip, a.take));
    },
    async nodeMove(node, moves, k) {
      const out = new Map<number, ShardSums>();
      shards.forEach((shard, s) => {
        if (moves.some((m) => shard.holds(m.index))) out.set(s, shard.move(node, moves, k));
      });
      return out;
    },
    commitSplit: (node, codewords, left, right, signal) => each(signal, (shard) => shard.commit(node, codewords, left, right)),
    async close() {},
  };
}

/** One node's view of the tree's shards: what core's Lloyd iteration (runLloyd) needs for the node's 2-means. */
export function nodeShards(shards: TreeShards, node: number): LloydShards {
  return {
    assign: (codewords, k, signal) => shards.nodeAssign(node, codewords, k, signal),
    members: (cell, asks, signal) => shards.nodeMembers(node, cell, asks, signal),
    move: (moves, k, signal) => shards.nodeMove(node, moves, k, signal),
  };
}
