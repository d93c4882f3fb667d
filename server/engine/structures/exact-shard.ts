import { addRow } from '../core/accumulate-centroids';
import { exactDistance } from '../core/exact-distance';
import { seedSteps, ShardSeeding } from '../core/init';
import { shardSplitSums } from '../core/split';
import type { CellMember, ShardAssignment, ShardExecutor, ShardMove, ShardSplitSums, ShardSums, SplitRequest } from '../core/types';

/**
 * One shard over a small vector set (N × d, row-major) whose nearest search is a brute-force scan with exact float64
 * distances, lowest index on ties: the search of core/exact-distance.ts. With it core's Lloyd iteration (runLloyd:
 * the same stop rule, empty-cell repair and float64 centroid sums) runs on a tree node's vectors in this thread,
 * without the worker threads a full-size training opens. The statistics follow the shard rule of core/shard-fold.ts
 * (each formed from zero in vector order), so a node's 2-means equals `train` with k = 2 on the same vectors and start.
 */
export function exactShard(vectors: Float32Array, d: number): ShardExecutor & { readonly indices: Uint32Array; readonly distances: Float64Array } {
  const n = vectors.length / d;
  const indices = new Uint32Array(n);
  const distances = new Float64Array(n);

  const sumsOf = (k: number): ShardSums => {
    const counts = new Uint32Array(k);
    const sums = new Float64Array(k * d);
    for (let v = 0; v < n; v++) {
      counts[indices[v]]++;
      addRow(sums, indices[v] * d, vectors, v * d, d);
    }
    return { counts, sums };
  };

  // k-means++ over this one shard (a node's 2-means starts from its parent's split, so this serves only callers
  // that seed): the textbook draw over the node's vectors in index order, on this thread.
  // Built at the first step, for that seeding's K.
  let steps: { k: number; seed: ShardExecutor['seed'] } | undefined;
  const seed: ShardExecutor['seed'] = (k, c, choice, signal) => {
    if (steps?.k !== k) {
      const seeding = ShardSeeding.plain(vectors, d, k, 0);
      steps = { k, ...seedSteps(vectors, d, k, [{ seeding: () => seeding }]) };
    }
    return steps.seed(k, c, choice, signal);
  };

  return {
    count: 1,
    indices,
    distances,
    seed,
    async assign(codewords: Float32Array, k: number): Promise<ShardAssignment[]> {
      const cellDistortion = new Float64Array(k);
      let total = 0;
      for (let v = 0; v < n; v++) {
        let best = Infinity;
        let bj = 0;
        for (let j = 0; j < k; j++) {
          const dist = exactDistance(vectors, v * d, codewords, j * d, d);
          if (dist < best) {
            best = dist;
            bj = j;
          }
        }
        indices[v] = bj;
        distances[v] = best;
        cellDistortion[bj] += best;
        total += best;
      }
      return [{ ...sumsOf(k), cellDistortion, total, redecided: 0, searched: n }];
    },
    async members(cell: number, asks: readonly { shard: number; skip: number; take: number }[]): Promise<CellMember[][]> {
      const list: CellMember[] = [];
      for (let v = 0; v < n; v++) if (indices[v] === cell) list.push({ index: v, distance: distances[v] });
      list.sort((a, b) => b.distance - a.distance || a.index - b.index);
      return asks.map((a) => list.slice(a.skip, a.skip + a.take));
    },
    async move(moves: readonly ShardMove[], k: number): Promise<Map<number, ShardSums>> {
      for (const m of moves) {
        indices[m.index] = m.cell;
        distances[m.index] = 0;
      }
      return new Map([[0, sumsOf(k)]]);
    },
    async splitSums(request: SplitRequest): Promise<ShardSplitSums[]> {
      return [shardSplitSums(vectors, d, indices, request)];
    },
    async close() {},
  };
}
