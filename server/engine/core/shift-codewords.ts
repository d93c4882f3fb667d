import { throwIfAborted } from './errors';
import { runLloyd, type LloydContext } from './lloyd';
import { principalHalves } from './split';
import type { IterationStat, TrainedCodebook } from './types';

/**
 * Re-seeding after Lloyd has converged, in the manner of the enhanced LBG (Patanè & Russo 2001): a cell's share of
 * the error measures its utility, so the codewords of the least-used cells (smallest total error) move to split the
 * cells with the largest error, and Lloyd decides: the shifted codebook is trained to convergence and kept only if
 * its distortion is strictly lower. Lloyd alone cannot make such a move, since it only ever moves a codeword
 * towards its own cell's centroid.
 */
export const SHIFT_ROUNDS = 2;
/**
 * Largest codebook that is shifted. A rejected shift costs a whole Lloyd run at that size; below this size such a run
 * costs at most a sixteenth of the ladder's last sizes (b = 10 at d = 16), and on the bench's ladders shifts were
 * accepted at small sizes and rejected at large ones, so above it the ladder spent time without gain.
 */
export const SHIFT_MAX_SIZE = 64;
/** Cells shifted together in one round: one in this many (at least one), so one Lloyd run tries many moves. */
export const SHIFT_FRACTION = 8;

/**
 * `book` (the last Lloyd result on ctx.shards, whose last pass is its partition) after up to SHIFT_ROUNDS accepted
 * shifts. On return the shards' last pass is again the returned codebook's partition.
 */
export async function shiftCodewords(ctx: LloydContext, book: TrainedCodebook): Promise<TrainedCodebook> {
  const { d } = ctx;
  const k = book.size;
  const count = Math.floor(k / SHIFT_FRACTION) || 1;
  if (k < 3 || k > SHIFT_MAX_SIZE || ctx.maxIterations === 0) return book;
  let best = book;
  for (let round = 0; round < SHIFT_ROUNDS; round++) {
    throwIfAborted(ctx.signal);
    // Ascending error (lowest index on ties): the first `count` give their codewords, the last `count` are split.
    const order = Array.from({ length: k }, (_, j) => j).sort((a, b) => best.cellDistortion[a] - best.cellDistortion[b] || a - b);
    const donors = order.slice(0, count);
    const split = Uint32Array.from(order.slice(k - count).sort((a, b) => a - b));
    if (split.some((j) => best.usage[j] < 2)) break;
    donors.sort((a, b) => a - b);
    const { upper, lower } = await principalHalves(best, d, split, ctx.shards, ctx.signal);
    const start = best.codewords.slice();
    split.forEach((j, r) => {
      start.set(upper.subarray(r * d, (r + 1) * d), j * d);
      start.set(lower.subarray(r * d, (r + 1) * d), donors[r] * d);
    });
    // A trial reports nothing while it runs (it may be dropped), and may take as many updates as the size's own run
    // did (at least one), so a round costs at most that run again.
    const budget = Math.max(1, Math.min(ctx.maxIterations, book.iterations));
    const trial = await runLloyd({ ...ctx, maxIterations: budget, onIteration: undefined, progress: undefined }, start, k);
    if (trial.distortion < best.distortion) {
      // A kept shift is one entry of the size's trace: the updates it took and the distortion it reached, so the
      // trace still never rises (the trial's own start is above the converged codebook it left).
      const elapsedMs = trial.trace.reduce((sum, t) => sum + t.elapsedMs, 0);
      const entry: IterationStat = {
        size: k, iteration: best.iterations + trial.iterations, distortion: trial.distortion,
        emptyRepaired: trial.trace.reduce((sum, t) => sum + t.emptyRepaired, 0), elapsedMs,
      };
      best = { ...trial, iterations: entry.iteration, trace: [...best.trace, entry] };
      ctx.onIteration?.(entry);
      continue;
    }
    // Not kept: the shards go back to the kept codebook's partition for the next split.
    await ctx.shards.assign(best.codewords, k, ctx.signal);
    break;
  }
  return best;
}
