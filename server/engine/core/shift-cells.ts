import { throwIfAborted } from './errors';
import { runLloyd, type LloydContext } from './lloyd';
import { principalHalves, type PrincipalHalves } from './split';
import type { IterationStat, ShardExecutor, TrainedCodebook } from './types';

/** Shifts need the shards' split sums too, besides the Lloyd passes (a ladder's executor has them; a tree node's view does not). */
export type ShiftContext = LloydContext & { shards: ShardExecutor };

/*
 * Codeword shifts after Lloyd has converged, in the manner of the enhanced LBG (Patanè & Russo, "The enhanced LBG
 * algorithm", Neural Networks 14, 2001): Lloyd only ever moves a codeword towards its own cell's centroid, so a
 * codeword that serves little (removing it costs little) stays where it is even when a cell elsewhere holds far more
 * error than its share. A shift removes such a codeword and splits a cell of large error with it; it is kept only when
 * the whole training set's distortion falls, so the ladder's distortion never rises. Every figure comes from the
 * shards' folded sums (the assignment's per-cell counts and errors, the split sums of core/split.ts), so a shift is
 * the same bits wherever the shards run.
 */

/** Shift rounds tried per codebook size; a round ends the shifting when it is not kept or finds no pair. */
export const SHIFT_ROUNDS = 4;
/** At most one shift per this many codewords in one round (at least one), so one Lloyd run tries many moves. */
export const SHIFT_FRACTION = 8;
/**
 * The looser of the two thresholds a round tries (gain above this share of the removal cost). Both estimates are
 * conservative — the gain is a cut through the codeword, not a 2-means, and the cost assumes one absorbing cell —
 * so pairs estimated slightly at a loss often pay once Lloyd has moved the neighbours; on the bench's ladders half
 * the cost kept more moves at most sizes than the full cost did, and the full cost is tried when it is not kept.
 */
export const SHIFT_LEAN = 0.5;
/** Cells whose split gain is measured in one round: this many per shift allowed (the cells of largest error). */
const CANDIDATES_PER_SHIFT = 8;

/** One shift: the codeword of cell `from` leaves it and, with the codeword of `to`, splits cell `to`. */
export interface Shift {
  from: number;
  to: number;
  /** Row of `to` in the halves the shift was chosen from. */
  row: number;
  /** Estimated fall in total squared error: gain of the split less the cost of the removal. */
  estimate: number;
}

/**
 * For each cell of `book`, the cell that would best absorb it and the cost of that merge: n_j·n_m/(n_j + n_m)·‖c_j − c_m‖²,
 * the rise in error when both cells' vectors go to their joint centroid (the merge cost of Ward's clustering, Ward
 * 1963, with the codewords standing for the cells' centroids, which they are after a Lloyd update). The smallest
 * over m ≠ j (lowest index on ties); each vector then goes to its nearest remaining codeword, which can only cost less.
 */
export function removalCosts(codewords: Float32Array, d: number, usage: Uint32Array): { cost: Float64Array; nearest: Int32Array } {
  const k = usage.length;
  const cost = new Float64Array(k).fill(Infinity);
  const nearest = new Int32Array(k).fill(-1);
  for (let j = 0; j < k; j++) {
    const nj = usage[j];
    for (let m = 0; m < k; m++) {
      if (m === j) continue;
      let s = 0;
      for (let i = 0; i < d; i++) {
        const t = codewords[j * d + i] - codewords[m * d + i];
        s += t * t;
      }
      const nm = usage[m];
      const c = nj === 0 ? 0 : ((nj * nm) / (nj + nm)) * s;
      if (c < cost[j]) {
        cost[j] = c;
        nearest[j] = m;
      }
    }
  }
  return { cost, nearest };
}

/**
 * The fall in a cell's error when its codeword c gives way to the centroids of its two halves:
 * n_u‖μ_u − c‖² + n_l‖μ_l − c‖², since each half's error about c is its error about its own centroid plus n‖μ − c‖².
 * Zero when a half is empty (the halves are then not centroids).
 */
export function splitGain(halves: PrincipalHalves, row: number, centre: Float32Array, d: number): number {
  const up = halves.upperCounts[row];
  const low = halves.counts[row] - up;
  if (up === 0 || low === 0) return 0;
  let su = 0;
  let sl = 0;
  for (let i = 0; i < d; i++) {
    const tu = halves.upper[row * d + i] - centre[i];
    const tl = halves.lower[row * d + i] - centre[i];
    su += tu * tu;
    sl += tl * tl;
  }
  return up * su + low * sl;
}

/**
 * The shifts of one round: split candidates by falling gain, removals by rising cost (lowest index on ties), paired
 * greedily while the gain exceeds `weight` times the cost (0: any pair), at most `max` of them. A cell takes part in at most one shift, and the
 * cell that absorbs a removed codeword's vectors is neither removed nor split in the same round (the cost assumes it
 * stays).
 */
export function chooseShifts(
  book: TrainedCodebook, d: number, cells: Uint32Array, halves: PrincipalHalves, max: number, weight = 1,
): Shift[] {
  const k = book.size;
  const { cost, nearest } = removalCosts(book.codewords, d, book.usage);
  const gains = Array.from(cells, (j, row) => ({ j, row, gain: splitGain(halves, row, book.codewords.subarray(j * d, (j + 1) * d), d) }))
    .filter((g) => g.gain > 0)
    .sort((a, b) => b.gain - a.gain || a.j - b.j);
  const removals = Array.from({ length: k }, (_, j) => j).sort((a, b) => cost[a] - cost[b] || a - b);
  const busy = new Uint8Array(k);
  const shifts: Shift[] = [];
  let next = 0;
  for (const { j: to, row, gain } of gains) {
    if (shifts.length >= max) break;
    if (busy[to]) continue;
    while (next < k && (busy[removals[next]] || removals[next] === to || busy[nearest[removals[next]]] || nearest[removals[next]] === to)) next++;
    if (next >= k) break;
    const from = removals[next];
    if (!(gain > weight * cost[from])) break;
    shifts.push({ from, to, row, estimate: gain - cost[from] });
    busy[from] = 1;
    busy[to] = 1;
    busy[nearest[from]] = 1;
    next++;
  }
  return shifts;
}

/** The codewords after the shifts: cell `to` gets its upper half, the codeword of `from` its lower half. */
export function applyShifts(codewords: Float32Array, d: number, shifts: readonly Shift[], halves: PrincipalHalves): Float32Array {
  const out = codewords.slice();
  for (const s of shifts) {
    out.set(halves.upper.subarray(s.row * d, (s.row + 1) * d), s.to * d);
    out.set(halves.lower.subarray(s.row * d, (s.row + 1) * d), s.from * d);
  }
  return out;
}

/**
 * The shift sets a round tries, in order: those whose split gain exceeds SHIFT_LEAN times the removal cost (more
 * moves), then those whose gain exceeds the cost (the surer ones), each only if it differs from the one before; when
 * neither finds a pair and a blind shift is allowed, the BLIND_TRIALS best-estimated pairs, each alone.
 */
export function shiftTrials(
  book: TrainedCodebook, d: number, cells: Uint32Array, halves: PrincipalHalves, max: number, blindAllowed: boolean,
): Array<{ shifts: Shift[]; blind: boolean }> {
  const out: Array<{ shifts: Shift[]; blind: boolean }> = [];
  for (const weight of [SHIFT_LEAN, 1]) {
    const shifts = chooseShifts(book, d, cells, halves, max, weight);
    const same = out.length > 0 && JSON.stringify(out[out.length - 1].shifts) === JSON.stringify(shifts);
    if (shifts.length > 0 && !same) out.push({ shifts, blind: false });
  }
  if (out.length === 0 && blindAllowed) {
    for (const shift of chooseShifts(book, d, cells, halves, BLIND_TRIALS, 0)) out.push({ shifts: [shift], blind: true });
  }
  return out;
}

/**
 * Trains each shift set from `best` (whose partition the shards hold) in turn and returns the first that ends below
 * it, as `best` extended by one trace entry; undefined when none does, with the shards put back on `best`'s
 * partition (once, after the last trial). A trial ends early when outOfReach says it cannot end below `best`.
 */
async function firstKept(
  ctx: ShiftContext, best: TrainedCodebook, trials: Array<{ shifts: Shift[]; blind: boolean }>, halves: PrincipalHalves, left: number,
): Promise<TrainedCodebook | undefined> {
  const k = best.size;
  for (const [t, { shifts, blind }] of trials.entries()) {
    throwIfAborted(ctx.signal);
    const start = applyShifts(best.codewords, ctx.d, shifts, halves);
    const trial = await runLloyd(
      { ...ctx, maxIterations: left, onIteration: undefined, progress: undefined }, start, k, blind ? Infinity : best.distortion,
      (trace) => outOfReach(trace.map((t) => t.distortion), best.distortion),
    );
    if (trial.iterations > 0 && trial.distortion < best.distortion) {
      // One trace entry for the round: a blind round's first updates lie above where `best` ended, so its own
      // entries would make the trace rise; the round's end lies below.
      const sum = (f: (t: IterationStat) => number) => trial.trace.reduce((a, t) => a + f(t), 0);
      const entry: IterationStat = {
        size: k, iteration: best.iterations + trial.iterations, distortion: trial.distortion,
        emptyRepaired: sum((t) => t.emptyRepaired), elapsedMs: sum((t) => t.elapsedMs),
        redecided: sum((t) => t.redecided ?? 0), searched: sum((t) => t.searched ?? 0), shifted: 2 * shifts.length,
      };
      ctx.onIteration?.(entry);
      ctx.progress?.(k, entry.iteration, entry.distortion);
      return { ...trial, iterations: entry.iteration, trace: [...best.trace, entry] };
    }
    // The next trial's first pass assigns afresh, so only the last rejected trial puts `best`'s partition back.
    if (t === trials.length - 1) await ctx.shards.assign(best.codewords, k, ctx.signal);
  }
  return undefined;
}

/** Updates of a trial before outOfReach may end it: the first updates after a shift fall far faster than the rest. */
export const TRIAL_WARMUP = 3;
/** Margin on outOfReach's extrapolated remaining fall: a trial ends only when twice that fall cannot reach the target. */
export const TRIAL_REACH = 2;

/**
 * Whether a shift trial whose distortions so far are `distortions` (index i after i updates; index 0 the shifted
 * start's) cannot end below `target`: after TRIAL_WARMUP updates, when the last distortion is not below the target
 * and the last two falls δ_{t−1} > δ_t > 0 shrink at ratio r = δ_t/δ_{t−1}, the falls still to come are taken as the
 * geometric tail δ_t·r/(1 − r) (a linearly converging sequence; Lloyd's iteration converges linearly near a
 * fixed point, common practice), and the trial is out of reach when even TRIAL_REACH times that tail leaves it at or above
 * the target. Falls that do not shrink never end a trial. On the bench's 8×8 ladder this ended the rejected blind
 * trials after three or four updates instead of a whole run (about a fifth of the ladder's CPU time); the one kept
 * trial it ended had lowered the distortion by 1.5e-5 of itself, less than the ladder's ε.
 */
export function outOfReach(distortions: readonly number[], target: number): boolean {
  const t = distortions.length - 1;
  if (t < TRIAL_WARMUP) return false;
  const last = distortions[t];
  if (!(last >= target)) return false;
  const fall = distortions[t - 1] - last;
  const before = distortions[t - 2] - distortions[t - 1];
  if (!(fall > 0 && before > fall)) return false;
  const r = fall / before;
  return last - TRIAL_REACH * fall * (r / (1 - r)) >= target;
}

/**
 * Sizes trained blind: a codebook at most this fraction of the ladder's largest size, when no shift is expected to
 * pay, still tries its best-estimated pairs (BLIND_TRIALS, one at a time) and trains each to convergence (or until outOfReach ends it). The estimates are conservative (the
 * split gain is a cut through the codeword, not a 2-means, and the removal cost assumes one absorbing cell), so a
 * shift estimated at a loss often still wins once Lloyd has moved the neighbours; at these sizes a whole Lloyd run
 * costs at most an eighth of the largest size's, and on the bench's ladders such shifts were kept at most sizes.
 */
export const BLIND_FRACTION = 8;
/** Pairs a blind round tries one after another (best estimate first) until one is kept. */
export const BLIND_TRIALS = 2;

/**
 * `book` (the last Lloyd result on ctx.shards, whose last pass is its partition) after up to SHIFT_ROUNDS kept rounds
 * of shifts; `largest` is the ladder's largest size. A round shifts every pair chooseShifts expects to pay (at most
 * one in SHIFT_FRACTION codewords) and trains the shifted codebook with what is left of the size's maximum
 * iterations, stopping after the first update unless that update is already below `book`; a blind round (see
 * BLIND_FRACTION) trains each of its single shifts to convergence unless outOfReach ends it first. A round is kept only if it ends below the codebook it started
 * from, and is one entry of the size's trace (IterationStat.shifted), so the trace never rises. On return the shards' last pass is the
 * returned codebook's partition.
 */
export async function shiftCodewords(ctx: ShiftContext, book: TrainedCodebook, largest: number): Promise<TrainedCodebook> {
  const { d } = ctx;
  const k = book.size;
  if (k < 3) return book;
  const max = Math.max(1, Math.floor(k / SHIFT_FRACTION));
  const blindAllowed = k * BLIND_FRACTION <= largest;
  let best = book;
  for (let round = 0; round < SHIFT_ROUNDS; round++) {
    const left = ctx.maxIterations - best.iterations;
    if (left < 1 || !(best.distortion > 0)) break;
    throwIfAborted(ctx.signal);
    const cells = Uint32Array.from(
      Array.from({ length: k }, (_, j) => j)
        .sort((a, b) => best.cellDistortion[b] - best.cellDistortion[a] || a - b)
        .slice(0, Math.min(k, max * CANDIDATES_PER_SHIFT))
        .sort((a, b) => a - b),
    );
    const halves = await principalHalves(best, d, cells, ctx.shards, ctx.signal);
    const kept = await firstKept(ctx, best, shiftTrials(best, d, cells, halves, max, blindAllowed), halves, left);
    if (!kept) break;
    best = kept;
  }
  return best;
}
