import { afterAll, describe, expect, it } from 'vitest';
import { runLloyd } from '../../../server/engine/core/lloyd';
import { chooseShifts, outOfReach, removalCosts, shiftCodewords, splitGain, TRIAL_REACH, TRIAL_WARMUP, type ShiftContext } from '../../../server/engine/core/shift-cells';
import type { PrincipalHalves } from '../../../server/engine/core/split';
import type { TrainedCodebook } from '../../../server/engine/core/types';
import { openLocalShards } from '../../../server/engine/training/local-shards';
import { shutdownEngineWorkers } from '../../../server/engine/training/index';

afterAll(() => shutdownEngineWorkers());

/** Total squared error of points (d = 1) about their own mean, written out. */
const sse = (xs: number[]) => {
  const mean = xs.reduce((a, b) => a + b, 0) / xs.length;
  return xs.reduce((a, x) => a + (x - mean) ** 2, 0);
};

/** A codebook record of the given codewords (d = 1) and usage; only what the shift choice reads. */
function book(codewords: number[], usage: number[], cellDistortion: number[]): TrainedCodebook {
  return {
    size: codewords.length, codewords: Float32Array.from(codewords), usage: Uint32Array.from(usage),
    cellDistortion: Float64Array.from(cellDistortion), distortion: 0, iterations: 0, trace: [],
  };
}

describe('codeword shifts', () => {
  it('costs a removal as the rise in error of merging the cell into its best neighbour (Ward 1963)', () => {
    // Cells A = {0, 2} (centroid 1), B = {5, 7} (centroid 6), C = {100}. Written out: merging A and B gives
    // {0, 2, 5, 7} about 3.5, 29, against 2 + 2 apart: a rise of 25 = (2·2/4)·(6 − 1)².
    const a = [0, 2];
    const b = [5, 7];
    expect(sse([...a, ...b]) - sse(a) - sse(b)).toBe(25);
    const { cost, nearest } = removalCosts(Float32Array.from([1, 6, 100]), 1, Uint32Array.from([2, 2, 1]));
    expect(Array.from(nearest)).toEqual([1, 0, 1]);
    expect(cost[0]).toBe(25);
    expect(cost[1]).toBe(25);
    // C into B: {5, 7, 100} about 112/3 against 2 + 0 apart, the smaller of the two merges (into A: 6534).
    expect(cost[2]).toBeCloseTo(sse([5, 7, 100]) - sse(b), 9);
    expect(cost[2]).toBeLessThan(sse([0, 2, 100]) - sse(a));
  });

  it('measures a split’s gain as the fall from the error about the codeword to the halves’ own errors', () => {
    // Cell {0, 2, 5, 7} with codeword 3.5, cut into {0, 2} and {5, 7}: 29 − (2 + 2) = 25.
    const halves: PrincipalHalves = {
      upper: Float32Array.from([6]), lower: Float32Array.from([1]), upperCounts: Uint32Array.from([2]), counts: Uint32Array.from([4]),
    };
    expect(splitGain(halves, 0, Float32Array.from([3.5]), 1)).toBe(sse([0, 2, 5, 7]) - sse([0, 2]) - sse([5, 7]));
    // About another codeword (3) the fall includes the codeword's own offset: Σ(x − 3)² = 9 + 1 + 4 + 16 = 30, so 26.
    expect(splitGain(halves, 0, Float32Array.from([3]), 1)).toBe(26);
    // A cell all on one side has no centroid pair: no gain is claimed.
    const oneSided = { ...halves, upperCounts: Uint32Array.from([4]) };
    expect(splitGain(oneSided, 0, Float32Array.from([3.5]), 1)).toBe(0);
  });

  it('pairs the cheapest removal with the largest gain and leaves the absorbing cell alone', () => {
    // Codewords 0 and 1 share one tight cluster; codeword 2 (at 150) covers two clusters, at 100 and 200.
    const b = book([-1, 1, 150], [10, 10, 20], [0, 0, 20 * 2500]);
    const halves: PrincipalHalves = {
      upper: Float32Array.from([200]), lower: Float32Array.from([100]), upperCounts: Uint32Array.from([10]), counts: Uint32Array.from([20]),
    };
    const shifts = chooseShifts(b, 1, Uint32Array.from([2]), halves, 1);
    // Removing codeword 0 costs (10·10/20)·2² = 20 (ties with codeword 1 go to the lower index); the split gains
    // 10·50² + 10·50² = 50,000.
    expect(shifts).toEqual([{ from: 0, to: 2, row: 0, estimate: 50_000 - 20 }]);
    // Nothing pays when the split gains less than the cheapest removal costs.
    const small: PrincipalHalves = { ...halves, upper: Float32Array.from([150.5]), lower: Float32Array.from([149.5]) };
    expect(chooseShifts(b, 1, Uint32Array.from([2]), small, 1)).toEqual([]);
  });

  it('gives up a trial only when twice its geometric tail of falls cannot reach the target', () => {
    expect([TRIAL_WARMUP, TRIAL_REACH]).toEqual([3, 2]);
    // 100, 20, 12, 10: falls 8 then 2, r = 1/4, tail 2·(1/4)/(3/4) = 2/3, twice that 4/3: it can reach 10 − 4/3 = 8.667.
    expect(outOfReach([100, 20, 12, 10], 8.6)).toBe(true);
    expect(outOfReach([100, 20, 12, 10], 26 / 3)).toBe(true);
    expect(outOfReach([100, 20, 12, 10], 8.7)).toBe(false);
    // 100, 20, 12, 10, 9: falls 2 then 1, r = 1/2, tail 1, twice that 2: it can reach 7.
    expect(outOfReach([100, 20, 12, 10, 9], 7)).toBe(true);
    expect(outOfReach([100, 20, 12, 10, 9], 6.9)).toBe(true);
    expect(outOfReach([100, 20, 12, 10, 9], 7.1)).toBe(false);
    // Too early (two updates), already below the target, or falls that do not shrink: the trial goes on.
    expect(outOfReach([100, 20, 12], 1)).toBe(false);
    expect(outOfReach([100, 20, 12, 10], 10.5)).toBe(false);
    expect(outOfReach([100, 20, 12, 11, 10], 1)).toBe(false);
    expect(outOfReach([100, 20, 12, 12, 12], 1)).toBe(false);
  });

  it('stops Lloyd after the update for which giveUp holds', async () => {
    const pattern = [-1, 1, 99, 101, 199, 201];
    const vectors = Float32Array.from({ length: 6 * 200 }, (_, v) => pattern[v % 6] + (v % 7) * 0.01);
    const shards = await openLocalShards(vectors, 1, { threads: 1, maxK: 3 });
    try {
      const ctx: ShiftContext = { d: 1, n: vectors.length, shards, epsilon: 0, maxIterations: 50 };
      const full = await runLloyd(ctx, Float32Array.from([-1, 0, 1]), 3);
      expect(full.iterations).toBeGreaterThan(2);
      const cut = await runLloyd(ctx, Float32Array.from([-1, 0, 1]), 3, Infinity, (trace) => trace.length === 3);
      expect(cut.iterations).toBe(2);
      expect(cut.trace.map((t) => t.distortion)).toEqual(full.trace.slice(0, 3).map((t) => t.distortion));
    } finally {
      await shards.close();
    }
  });

  it('moves a codeword Lloyd cannot move and reaches the hand-computed optimum of three clusters', async () => {
    // Points ±1 about 0, 100 and 200 (d = 1), 2,000 of each. The best 3-codebook is {0, 100, 200} with squared
    // error 1 per point. From −1, 1 and 150 Lloyd is at a fixed point: the first two codewords halve the cluster at
    // 0 and the third sits at the mean of the other two clusters, squared error 50² ± 2·50 + 1 per point there.
    const pattern = [-1, 1, 99, 101, 199, 201];
    const vectors = Float32Array.from({ length: 6 * 2000 }, (_, v) => pattern[v % 6]);
    const n = vectors.length;
    const shards = await openLocalShards(vectors, 1, { threads: 1, maxK: 3 });
    try {
      const ctx: ShiftContext = { d: 1, n, shards, epsilon: 1e-6, maxIterations: 50 };
      const stuck = await runLloyd(ctx, Float32Array.from([-1, 1, 150]), 3);
      expect(Array.from(stuck.codewords)).toEqual([-1, 1, 150]);
      expect(stuck.distortion).toBeCloseTo((2 * 0 + 4 * 2501) / 6, 9);
      const seen: number[] = [];
      const shifted = await shiftCodewords({ ...ctx, onIteration: (s) => seen.push(s.shifted ?? 0) }, stuck, 3);
      expect(Array.from(shifted.codewords).sort((a, b) => a - b)).toEqual([0, 100, 200]);
      expect(shifted.distortion).toBe(1);
      // One trace entry for the kept round, below where Lloyd stopped, reported as it is kept.
      const entry = shifted.trace.at(-1)!;
      expect(entry.shifted).toBe(2);
      expect(entry.distortion).toBe(1);
      expect(seen).toEqual([2]);
      expect(shifted.iterations).toBe(entry.iteration);
      expect(shifted.trace.slice(0, stuck.trace.length)).toEqual(stuck.trace);
      // The shards were left on the kept codebook's partition: another round finds nothing worth moving.
      const again = await shiftCodewords(ctx, shifted, 3);
      expect(again).toBe(shifted);
    } finally {
      await shards.close();
    }
  });

  it('leaves the shards on the codebook’s own partition when every trial is rejected', async () => {
    // Points ±1 about 0, 100, 200 and 300 (d = 1), 500 of each, with the codebook at the optimum {0, 100, 200, 300}:
    // no shift can end below squared error 1 per point, so the blind trials (K = 4 ≤ 64/8) are all rejected.
    const pattern = [-1, 1, 99, 101, 199, 201, 299, 301];
    const vectors = Float32Array.from({ length: 8 * 500 }, (_, v) => pattern[v % 8]);
    const n = vectors.length;
    const shards = await openLocalShards(vectors, 1, { threads: 1, maxK: 4 });
    try {
      const ctx: ShiftContext = { d: 1, n, shards, epsilon: 1e-6, maxIterations: 50 };
      const optimum = await runLloyd(ctx, Float32Array.from([0, 100, 200, 300]), 4);
      expect(optimum.distortion).toBe(1);
      const seen: number[] = [];
      const after = await shiftCodewords({ ...ctx, onIteration: (s) => seen.push(s.iteration) }, optimum, 64);
      expect(after).toBe(optimum);
      expect(seen).toEqual([]);
      // Each cell's members are again its own cluster's 1,000 points.
      for (let cell = 0; cell < 4; cell++) {
        const [members] = await shards.members(cell, [{ shard: 0, skip: 0, take: n }]);
        expect(members.length).toBe(1000);
        expect(members.every((m) => Math.abs(vectors[m.index] - 100 * cell) === 1)).toBe(true);
      }
    } finally {
      await shards.close();
    }
  });
});
