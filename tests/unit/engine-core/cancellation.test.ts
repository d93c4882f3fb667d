import { afterAll, describe, expect, it } from 'vitest';
import {
  createRng, engineWorkerStats, shutdownEngineWorkers, threadBudget, train, assign,
} from '../../../server/engine/training/index';

afterAll(() => shutdownEngineWorkers());

function gaussian(n: number, d: number, seed: number): Float32Array {
  const rng = createRng(seed);
  return new Float32Array(n * d).map(() => rng.normal());
}

describe('cancellation', () => {
  it('rejects with an AbortError mid-training and leaves no worker busy', async () => {
    const vectors = gaussian(40_000, 16, 1);
    const controller = new AbortController();
    let iterations = 0;
    const run = train(vectors, 16, {
      k: 256, init: 'random', epsilon: 0, maxIterations: 1000, threads: threadBudget.total,
      onIteration: () => {
        iterations++;
        if (iterations === 3) controller.abort();
      },
      signal: controller.signal,
    });
    await expect(run).rejects.toMatchObject({ name: 'AbortError' });
    expect(iterations).toBeGreaterThanOrEqual(3);
    expect(iterations).toBeLessThan(10);
    expect(engineWorkerStats().busy).toBe(0);
    expect(threadBudget.available).toBe(threadBudget.total);
  });

  it('stops k-means++ seeding when aborted and keeps the event loop turning meanwhile', async () => {
    const vectors = gaussian(60_000, 8, 4);
    const controller = new AbortController();
    let ticks = 0;
    const timer = setInterval(() => ticks++, 5);
    setTimeout(() => controller.abort(), 150);
    let iterations = 0;
    try {
      const run = train(vectors, 8, {
        k: 4000, init: 'kmeans++', signal: controller.signal, onIteration: () => iterations++,
      });
      await expect(run).rejects.toMatchObject({ name: 'AbortError' });
    } finally {
      clearInterval(timer);
    }
    // Iteration 0 is reported right after seeding: none means the seeding itself was cut.
    expect(iterations).toBe(0);
    // The abort timer itself can only fire if seeding yields, and the 5 ms interval is due before it, so
    // at least one tick proves the loop kept turning; more would depend on the machine's load.
    expect(ticks).toBeGreaterThan(0);
    expect(threadBudget.available).toBe(threadBudget.total);
  });

  it('rejects at once when the signal is already aborted', async () => {
    const controller = new AbortController();
    controller.abort();
    await expect(train(gaussian(100, 2, 2), 2, { k: 4, init: 'split', signal: controller.signal }))
      .rejects.toMatchObject({ name: 'AbortError' });
    await expect(assign(gaussian(100, 2, 2), 2, new Float32Array(4), { signal: controller.signal }))
      .rejects.toMatchObject({ name: 'AbortError' });
  });

  it('stops a parallel pass between chunks when aborted during it', async () => {
    const vectors = gaussian(200_000, 32, 3);
    const codewords = vectors.slice(0, 512 * 32);
    const controller = new AbortController();
    const run = assign(vectors, 32, codewords, { signal: controller.signal, threads: threadBudget.total });
    setTimeout(() => controller.abort(), 20);
    await expect(run).rejects.toMatchObject({ name: 'AbortError' });
    expect(engineWorkerStats().busy).toBe(0);
    expect(threadBudget.available).toBe(threadBudget.total);
  });
});
