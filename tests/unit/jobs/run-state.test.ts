import { describe, expect, it } from 'vitest';
import type { JobState } from '../../../server/contracts';
import { runStateOf } from '../../../server/services/run-state';
import { trainingPasses } from '../../../server/jobs/handlers/train';

const jobs = (...list: [string, JobState][]) => list.map(([kind, state]) => ({ kind, state }));

describe('runStateOf', () => {
  it('is queued until the train job starts', () => {
    expect(runStateOf(jobs(['train', 'queued']))).toBe('queued');
  });

  it('stays running between training and evaluation', () => {
    expect(runStateOf(jobs(['train', 'running']))).toBe('running');
    expect(runStateOf(jobs(['train', 'succeeded'], ['evaluate', 'queued']))).toBe('running');
    expect(runStateOf(jobs(['train', 'succeeded']))).toBe('running');
  });

  it('succeeds only once its evaluation has', () => {
    expect(runStateOf(jobs(['train', 'succeeded'], ['evaluate', 'succeeded']))).toBe('succeeded');
  });

  it('fails or is cancelled when any job is', () => {
    expect(runStateOf(jobs(['train', 'succeeded'], ['evaluate', 'failed']))).toBe('failed');
    expect(runStateOf(jobs(['train', 'cancelled']))).toBe('cancelled');
    expect(runStateOf(jobs(['train', 'failed'], ['evaluate', 'cancelled']))).toBe('failed');
  });
});

describe('trainingPasses', () => {
  it('trains a split sweep in one pass up to the largest size, keeping the requested sizes', () => {
    const passes = trainingPasses({ init: 'split', sizes: [8, 16, 32] });
    expect(passes).toHaveLength(1);
    expect(passes[0].k).toBe(32);
    expect([...passes[0].keep]).toEqual([8, 16, 32]);
  });

  it('trains each size afresh for random and k-means++ starts', () => {
    for (const init of ['random', 'kmeans++'] as const) {
      const passes = trainingPasses({ init, sizes: [2, 4] });
      expect(passes.map((p) => [p.k, [...p.keep]])).toEqual([
        [2, [2]],
        [4, [4]],
      ]);
    }
  });
});
