import { abortError } from './errors';
import { repairEmptyCells, worstMembers } from './repair-empty-cells';
import { foldCentroids, foldStatistics } from './shard-fold';
import type { CellStatistics, IterationStat, LloydShards, PassStats, ShardAssignment, TrainedCodebook } from './types';

export interface LloydContext {
  d: number;
  n: number;
  /** The training set's shards, computed here or elsewhere; every statistic is folded from them in shard order. */
  shards: LloydShards;
  epsilon: number;
  maxIterations: number;
  signal?: AbortSignal;
  onIteration?: (s: IterationStat) => void;
  /** Called after every pass with the iteration just finished. */
  progress?: (size: number, iteration: number, distortion: number) => void;
}

interface Pass {
  parts: ShardAssignment[];
  stats: CellStatistics;
  pass: PassStats;
}

async function assignPass(ctx: LloydContext, codewords: Float32Array, k: number): Promise<Pass> {
  const parts = await ctx.shards.assign(codewords, k, ctx.signal);
  let redecided = 0;
  let searched = 0;
  for (const p of parts) {
    redecided += p.redecided;
    searched += p.searched;
  }
  return { parts, stats: foldStatistics(parts, k), pass: { redecided, searched } };
}

/** Re-seeds the empty cells of a pass (repairEmptyCells' rule) and takes the moved shards' new sums; returns how many. */
async function repair(ctx: LloydContext, current: Pass, k: number): Promise<number> {
  if (current.stats.usage.indexOf(0) < 0) return 0;
  const moves = await repairEmptyCells(current.stats.usage, current.stats.cellDistortion, worstMembers(ctx.shards, current.parts, ctx.signal));
  const sums = await ctx.shards.move(moves, k, ctx.signal);
  for (const [s, part] of sums) current.parts[s] = { ...current.parts[s], counts: part.counts, sums: part.sums };
  return moves.length;
}

/**
 * Generalized Lloyd iteration from `codewords` (K × d, row-major; modified in place):
 * nearest-codeword partition, empty-cell repair, centroid update, repeated until the
 * relative drop (D_prev − D)/D falls below epsilon, the distortion stops dropping at all (a fixed point, even with
 * epsilon 0), or maxIterations updates are done.
 * If an update raises the distortion (float32 rounding of the centroids at convergence
 * can do that by a hair) the previous codebook is kept and the run stops.
 * With `beat` given, training stops after the first update when that update's distortion is not below it (see shift-cells.ts);
 * with `giveUp` given, it stops after any update for which giveUp(trace so far) holds (shift-cells.ts' outOfReach).
 * Each iteration is one pass of every shard; the statistics and centroids are folded from the shards' partials in
 * shard order (shard-fold.ts), so the result does not depend on where the shards were computed.
 */
export async function runLloyd(
  ctx: LloydContext, codewords: Float32Array, k: number, beat = Infinity, giveUp?: (trace: readonly IterationStat[]) => boolean,
): Promise<TrainedCodebook> {
  const { d, n, signal } = ctx;
  const trace: IterationStat[] = [];
  const scale = n * d;
  const record = (s: IterationStat) => {
    trace.push(s);
    ctx.onIteration?.(s);
    ctx.progress?.(k, s.iteration, s.distortion);
  };

  let t0 = performance.now();
  let current = await assignPass(ctx, codewords, k);
  let distortion = current.stats.total / scale;
  record({
    size: k, iteration: 0, distortion, emptyRepaired: 0, elapsedMs: performance.now() - t0,
    redecided: current.pass.redecided, searched: current.pass.searched,
  });

  const previous = new Float32Array(k * d);
  const scratch = new Float64Array(k * d);
  let iterations = 0;
  while (iterations < ctx.maxIterations && distortion > 0 && (iterations === 0 || distortion < beat)) {
    if (signal?.aborted) throw abortError(signal);
    t0 = performance.now();
    const repaired = await repair(ctx, current, k);
    previous.set(codewords.subarray(0, k * d));
    foldCentroids(current.parts, k, d, codewords, scratch);
    const next = await assignPass(ctx, codewords, k);
    const nextDistortion = next.stats.total / scale;
    iterations++;
    record({
      size: k, iteration: iterations, distortion: nextDistortion, emptyRepaired: repaired,
      elapsedMs: performance.now() - t0, redecided: next.pass.redecided, searched: next.pass.searched,
    });
    if (nextDistortion > distortion) {
      codewords.set(previous);
      current = await assignPass(ctx, codewords, k);
      break;
    }
    const drop = (distortion - nextDistortion) / nextDistortion;
    current = next;
    distortion = nextDistortion;
    // A pass that did not lower the distortion is a fixed point: with unchanged assignments the next update would
    // give the same centroids again. It ends training whatever epsilon is (epsilon 0 would otherwise run every
    // allowed pass); a positive drop below epsilon ends it as before.
    if (!(drop > 0 && drop >= ctx.epsilon)) break;
    if (giveUp?.(trace)) break;
  }
  return {
    size: k,
    codewords: codewords.slice(0, k * d),
    usage: current.stats.usage,
    cellDistortion: current.stats.cellDistortion,
    distortion: current.stats.total / scale,
    iterations,
    trace,
  };
}
