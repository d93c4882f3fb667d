import type { CellStatistics, ShardAssignment, ShardSplitSums, ShardSums } from './types';

/*
 * The shard rule, in one place. A shard's statistics are formed from zero in vector order (its counts, per-cell
 * float64 error and centroid sums, and its total error); the totals are then formed in shard order: a cell's total
 * starts as a copy of the first shard that holds any of its vectors and adds each later shard that does, in order,
 * one float64 addition per value. Shards that hold none of a cell's vectors add nothing (not even a zero, whose sign
 * could change a −0). Whoever computes the shards — one thread, many, or other machines — the folds below see the
 * same partials in the same order, so the codebooks are the same bits.
 */

/** Usage, per-cell and total error of a partition from its shards' partials (in shard order). */
export function foldStatistics(parts: readonly Pick<ShardAssignment, 'counts' | 'cellDistortion' | 'total'>[], k: number): CellStatistics {
  const usage = new Uint32Array(k);
  const cellDistortion = new Float64Array(k);
  let total = 0;
  for (let s = 0; s < parts.length; s++) {
    const { counts, cellDistortion: dist } = parts[s];
    for (let j = 0; j < k; j++) {
      if (counts[j] === 0) continue;
      cellDistortion[j] = usage[j] === 0 ? dist[j] : cellDistortion[j] + dist[j];
      usage[j] += counts[j];
    }
    total = s === 0 ? parts[s].total : total + parts[s].total;
  }
  return { usage, cellDistortion, total };
}

/**
 * Centroid update from the shards' sums (in shard order): codewords[j] = Σ_s sums_s[j] / usage[j] rounded to
 * float32 for every non-empty cell; empty cells keep their codeword. `total` is scratch of K × d.
 */
export function foldCentroids(
  parts: readonly ShardSums[], k: number, d: number, codewords: Float32Array, total: Float64Array = new Float64Array(k * d),
): Uint32Array {
  const usage = new Uint32Array(k);
  for (const { counts, sums } of parts) {
    for (let j = 0; j < k; j++) {
      if (counts[j] === 0) continue;
      const o = j * d;
      if (usage[j] === 0) for (let i = 0; i < d; i++) total[o + i] = sums[o + i];
      else for (let i = 0; i < d; i++) total[o + i] += sums[o + i];
      usage[j] += counts[j];
    }
  }
  for (let j = 0; j < k; j++) {
    const c = usage[j];
    if (c === 0) continue;
    const o = j * d;
    for (let i = 0; i < d; i++) codewords[o + i] = total[o + i] / c;
  }
  return usage;
}

/**
 * Split sums of every shard (in shard order) folded by the same rule: a cell's scatter starts with the first shard
 * holding any of its vectors, its upper (lower) sums with the first shard holding any of its upper (lower) vectors.
 */
export function foldSplitSums(parts: readonly ShardSplitSums[], m: number, d: number): ShardSplitSums {
  const counts = new Uint32Array(m);
  const upperCounts = new Uint32Array(m);
  const scatter = new Float64Array(m * d);
  const upperSums = new Float64Array(m * d);
  const lowerSums = new Float64Array(m * d);
  const add = (into: Float64Array, from: Float64Array, o: number, first: boolean) => {
    if (first) for (let i = 0; i < d; i++) into[o + i] = from[o + i];
    else for (let i = 0; i < d; i++) into[o + i] += from[o + i];
  };
  for (const part of parts) {
    for (let r = 0; r < m; r++) {
      const n = part.counts[r];
      if (n === 0) continue;
      const o = r * d;
      const up = part.upperCounts[r];
      add(scatter, part.scatter, o, counts[r] === 0);
      if (up > 0) add(upperSums, part.upperSums, o, upperCounts[r] === 0);
      if (n - up > 0) add(lowerSums, part.lowerSums, o, counts[r] - upperCounts[r] === 0);
      counts[r] += n;
      upperCounts[r] += up;
    }
  }
  return { counts, scatter, upperCounts, upperSums, lowerSums };
}
