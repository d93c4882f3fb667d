import { throwIfAborted } from './errors';
import { createRng } from './rng';
import { foldSplitSums } from './shard-fold';
import type { ShardExecutor, ShardSplitSums, SplitRequest, TrainedCodebook } from './types';

/**
 * The cells an LBG step from `book.size` to `to` codewords splits: every cell when doubling, otherwise the
 * (to − size) cells with the largest total error (lowest index on ties); ascending.
 */
export function cellsToSplit(book: TrainedCodebook, to: number): number[] {
  const size = book.size;
  const all = Array.from({ length: size }, (_, j) => j);
  if (to - size >= size) return all;
  return all
    .sort((a, b) => book.cellDistortion[b] - book.cellDistortion[a] || a - b)
    .slice(0, to - size)
    .sort((a, b) => a - b);
}

/**
 * The former splitting step, kept as the baseline the principal split is measured against (tests, bench): the split
 * pair is c + p, kept at c's index, and c − p, appended in index order, with p = δσ·(1, …, 1) where σ is the cell's
 * RMS error per component. Returns the new codewords, to × d, row-major.
 */
export function splitCodebook(book: TrainedCodebook, d: number, to: number, delta: number): Float32Array {
  const size = book.size;
  const out = new Float32Array(to * d);
  out.set(book.codewords.subarray(0, size * d));
  cellsToSplit(book, to).forEach((j, r) => {
    const used = book.usage[j];
    const sigma = used > 0 ? Math.sqrt(book.cellDistortion[j] / (used * d)) : 0;
    const p = delta * sigma;
    const dst = (size + r) * d;
    for (let i = 0; i < d; i++) {
      const c = book.codewords[j * d + i];
      out[j * d + i] = c + p;
      out[dst + i] = c - p;
    }
  });
  return out;
}

/**
 * Power-iteration steps on each cell's scatter before the cut. A split needs a direction of large spread, not the
 * exact principal axis, and each step is one O(N·d) sweep of the shards (a Lloyd pass costs O(N·K·d)); three steps
 * from a generic start were as good as six on the bench's ladders.
 */
export const SPLIT_POWER_STEPS = 3;
/** Seed of the one fixed start direction every cell's power iteration begins from (any generic vector would do). */
const START_SEED = 0x5eed;

/**
 * The generic start of the power iteration: d standard normal draws from a fixed seed, unit length. Almost surely
 * not orthogonal to any cell's principal axis, unlike (1, …, 1), to which every mean-removed vector is orthogonal.
 */
export function splitStartDirection(d: number): Float64Array {
  const rng = createRng(START_SEED);
  const u = new Float64Array(d);
  let norm = 0;
  for (let i = 0; i < d; i++) {
    u[i] = rng.normal();
    norm += u[i] * u[i];
  }
  norm = Math.sqrt(norm);
  for (let i = 0; i < d; i++) u[i] /= norm;
  return u;
}

/**
 * One shard's split sums (ShardSplitSums) over its vectors (n × d, row-major) and the cells of its last partition
 * (`indices`, n), each formed from zero in vector order.
 */
export function shardSplitSums(vectors: Float32Array, d: number, indices: Uint32Array, request: SplitRequest): ShardSplitSums {
  const { cells, centres, directions } = request;
  const m = cells.length;
  const row = new Map<number, number>();
  cells.forEach((j, r) => row.set(j, r));
  const counts = new Uint32Array(m);
  const upperCounts = new Uint32Array(m);
  const scatter = new Float64Array(m * d);
  const upperSums = new Float64Array(m * d);
  const lowerSums = new Float64Array(m * d);
  for (let v = 0; v < indices.length; v++) {
    const r = row.get(indices[v]);
    if (r === undefined) continue;
    const x = v * d;
    const o = r * d;
    let t = 0;
    for (let i = 0; i < d; i++) t += (vectors[x + i] - centres[o + i]) * directions[o + i];
    for (let i = 0; i < d; i++) scatter[o + i] += (vectors[x + i] - centres[o + i]) * t;
    counts[r]++;
    const side = t > 0 ? upperSums : lowerSums;
    if (t > 0) upperCounts[r]++;
    for (let i = 0; i < d; i++) side[o + i] += vectors[x + i];
  }
  return { counts, scatter, upperCounts, upperSums, lowerSums };
}

/**
 * LBG splitting step along principal directions: codewords `book` (size × d) grow to `to` codewords, splitting the
 * cells cellsToSplit names. For each, SPLIT_POWER_STEPS steps of power iteration on the cell's scatter about its
 * codeword c (from splitStartDirection, on the shards' last partition) give a direction u of largest spread; the
 * cell is then cut by the hyperplane through c normal to u, and the pair is the centroids of the two halves: the
 * side (x − c)·u > 0 kept at c's index, the other appended in index order (as in principal-direction divisive
 * partitioning, Boley 1998). A cell all on one side gets c ± s·u, s its RMS spread along u (zero for an empty or
 * one-point cell: both halves are c and Lloyd's empty-cell repair takes over).
 * Every sum comes from the shards and is folded in shard order (shard-fold.ts), so the codewords are the same bits
 * wherever the shards run. Returns the new codewords, to × d, row-major.
 */
export async function splitAlongPrincipalDirections(
  book: TrainedCodebook, d: number, to: number, shards: ShardExecutor, signal?: AbortSignal,
): Promise<Float32Array> {
  const size = book.size;
  const cells = Uint32Array.from(cellsToSplit(book, to));
  const { upper, lower } = await principalHalves(book, d, cells, shards, signal);
  const out = new Float32Array(to * d);
  out.set(book.codewords.subarray(0, size * d));
  cells.forEach((j, r) => {
    out.set(upper.subarray(r * d, (r + 1) * d), j * d);
    out.set(lower.subarray(r * d, (r + 1) * d), (size + r) * d);
  });
  return out;
}

/** The halves of the cells asked: row r for cells[r]. */
export interface PrincipalHalves {
  /** m × d: the centroid of the side (x − c)·u > 0 (or c + s·u when a side is empty). */
  upper: Float32Array;
  /** m × d: the centroid of the other side (or c − s·u). */
  lower: Float32Array;
  /** m: vectors on the upper side. */
  upperCounts: Uint32Array;
  /** m: vectors of the cell. */
  counts: Uint32Array;
}

/**
 * The two halves of each cell asked (ascending), by the principal split's rule (splitAlongPrincipalDirections):
 * `upper` and `lower`, m × d each, row r for cells[r].
 */
export async function principalHalves(
  book: TrainedCodebook, d: number, cells: Uint32Array, shards: ShardExecutor, signal?: AbortSignal,
): Promise<PrincipalHalves> {
  const m = cells.length;
  const centres = new Float32Array(m * d);
  cells.forEach((j, r) => centres.set(book.codewords.subarray(j * d, (j + 1) * d), r * d));
  const directions = new Float64Array(m * d);
  const start = splitStartDirection(d);
  for (let r = 0; r < m; r++) directions.set(start, r * d);
  const request: SplitRequest = { cells, centres, directions };

  let sums = foldSplitSums(await shards.splitSums(request, signal), m, d);
  for (let step = 0; step < SPLIT_POWER_STEPS; step++) {
    throwIfAborted(signal);
    nextDirections(sums.scatter, directions, m, d);
    sums = foldSplitSums(await shards.splitSums(request, signal), m, d);
  }
  const upperOut = new Float32Array(m * d);
  const lowerOut = new Float32Array(m * d);
  for (let r = 0; r < m; r++) {
    const o = r * d;
    const upper = sums.upperCounts[r];
    const lower = sums.counts[r] - upper;
    if (upper > 0 && lower > 0) {
      for (let i = 0; i < d; i++) {
        upperOut[o + i] = sums.upperSums[o + i] / upper;
        lowerOut[o + i] = sums.lowerSums[o + i] / lower;
      }
      continue;
    }
    // u·(S u) = Σ t², so s² is the mean squared projection on u.
    let spread = 0;
    for (let i = 0; i < d; i++) spread += directions[o + i] * sums.scatter[o + i];
    const s = sums.counts[r] > 0 ? Math.sqrt(Math.max(0, spread) / sums.counts[r]) : 0;
    for (let i = 0; i < d; i++) {
      upperOut[o + i] = centres[o + i] + s * directions[o + i];
      lowerOut[o + i] = centres[o + i] - s * directions[o + i];
    }
  }
  return { upper: upperOut, lower: lowerOut, upperCounts: sums.upperCounts, counts: sums.counts };
}

/** u ← S u / ‖S u‖ per row; a row whose product is zero (no spread) or not finite keeps its direction. */
function nextDirections(scatter: Float64Array, directions: Float64Array, m: number, d: number): void {
  for (let r = 0; r < m; r++) {
    const o = r * d;
    let norm = 0;
    for (let i = 0; i < d; i++) norm += scatter[o + i] * scatter[o + i];
    norm = Math.sqrt(norm);
    if (!(norm > 0) || !Number.isFinite(norm)) continue;
    for (let i = 0; i < d; i++) directions[o + i] = scatter[o + i] / norm;
  }
}
