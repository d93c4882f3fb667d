import type { RunDetail, RunSummary } from '../../../server/contracts';

/** An invented run summary; `over` replaces any field. */
export function runSummaryOf(id: number, over: Partial<RunSummary> = {}): RunSummary {
  return {
    id,
    name: `Sweep ${id}`,
    notes: null,
    state: 'succeeded',
    error: null,
    createdBy: { id: 1, name: 'Mira' },
    createdAt: `2026-11-30T08:${String(10 + id).padStart(2, '0')}:00.000Z`,
    finishedAt: null,
    heldOutHash: 'a'.repeat(64),
    progress: 1,
    bestOperatingPoint: null,
    ...over,
  };
}

/** An invented run detail that the run contract accepts; `over` replaces any field. */
export function runDetailOf(id: number, over: Partial<RunDetail> = {}): RunDetail {
  return {
    ...runSummaryOf(id),
    config: { name: `Sweep ${id}`, trainingSetId: 1, heldOutSetId: 1, patch: { width: 4, height: 4 }, bits: 2 },
    normalized: {
      trainingImageIds: [1],
      heldOutImageIds: [2],
      patch: { width: 4, height: 4 },
      color: 'luma',
      meanBits: 0,
      bits: { from: 2, to: 2 },
      sizes: [4],
      init: 'split',
      epsilon: 1e-4,
      maxIterations: 100,
      maxVectors: 200_000,
      seed: 1,
    },
    jobs: [],
    codebooks: [],
    ...over,
  };
}
