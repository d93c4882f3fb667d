import { cellStatistics } from './accumulate-centroids';
import { abortError } from './errors';
import { repairEmptyCells } from './repair-empty-cells';
import type { IterationStat, PassSearch, TrainedCodebook } from './types';

export interface LloydContext {
  vectors: Float32Array; // N × d
  d: number;
  n: number;
  search: PassSearch;
  epsilon: number;
  maxIterations: number;
  signal?: AbortSignal;
  onIteration?: (s: IterationStat) => void;
  /** Called after every pass with the iteration just finished. */
  progress?: (size: number, iteration: number, distortion: number) => void;
}

/**
 * Generalized Lloyd iteration from `codewords` (K × d, row-major; modified in place):
 * nearest-codeword partition, empty-cell repair, centroid update, repeated until the
 * relative drop (D_prev − D)/D falls below epsilon, the distortion stops dropping at all (a fixed point, even with
 * epsilon 0), or maxIterations updates are done.
 * If an update raises the distortion (float32 rounding of the centroids at convergence
 * can do that by a hair) the previous codebook is kept and the run stops.
 */
export async function runLloyd(ctx: LloydContext, codewords: Float32Array, k: number): Promise<TrainedCodebook> {
  const { d, n, search, signal } = ctx;
  const trace: IterationStat[] = [];
  const scale = n * d;
  const record = (s: IterationStat) => {
    trace.push(s);
    ctx.onIteration?.(s);
    ctx.progress?.(k, s.iteration, s.distortion);
  };

  let t0 = performance.now();
  let pass = await search.run(codewords, k, signal);
  let stats = cellStatistics(search.indices, search.distances, k);
  let distortion = stats.total / scale;
  record({
    size: k, iteration: 0, distortion, emptyRepaired: 0, elapsedMs: performance.now() - t0,
    redecided: pass.redecided, searched: pass.searched,
  });

  const previous = new Float32Array(k * d);
  let iterations = 0;
  while (iterations < ctx.maxIterations && distortion > 0) {
    if (signal?.aborted) throw abortError(signal);
    t0 = performance.now();
    const repaired = repairEmptyCells(search.indices, search.distances, stats.usage, stats.cellDistortion);
    previous.set(codewords.subarray(0, k * d));
    await search.accumulate(codewords, k, signal);
    pass = await search.run(codewords, k, signal);
    const next = cellStatistics(search.indices, search.distances, k);
    const nextDistortion = next.total / scale;
    iterations++;
    record({
      size: k, iteration: iterations, distortion: nextDistortion, emptyRepaired: repaired,
      elapsedMs: performance.now() - t0, redecided: pass.redecided, searched: pass.searched,
    });
    if (nextDistortion > distortion) {
      codewords.set(previous);
      await search.run(codewords, k, signal);
      stats = cellStatistics(search.indices, search.distances, k);
      break;
    }
    const drop = (distortion - nextDistortion) / nextDistortion;
    stats = next;
    distortion = nextDistortion;
    // A pass that did not lower the distortion is a fixed point: with unchanged assignments the next update would
    // give the same centroids again. It ends training whatever epsilon is (epsilon 0 would otherwise run every
    // allowed pass); a positive drop below epsilon ends it as before.
    if (!(drop > 0 && drop >= ctx.epsilon)) break;
  }
  return {
    size: k,
    codewords: codewords.slice(0, k * d),
    usage: stats.usage,
    cellDistortion: stats.cellDistortion,
    distortion: stats.total / scale,
    iterations,
    trace,
  };
}
