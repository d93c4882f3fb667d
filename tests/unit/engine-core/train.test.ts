import { afterAll, describe, expect, it } from 'vitest';
import { EngineError, createRng, shutdownEngineWorkers, train, type TrainProgress } from '../../../server/engine/training/index';

afterAll(() => shutdownEngineWorkers());

function gaussian(n: number, d: number, seed: number): Float32Array {
  const rng = createRng(seed);
  return new Float32Array(n * d).map(() => rng.normal());
}

const codeOf = async (p: Promise<unknown>) => {
  try {
    await p;
  } catch (err) {
    return err instanceof EngineError ? err.code : `not an EngineError: ${String(err)}`;
  }
  return 'resolved';
};

describe('train', () => {
  it('rejects fewer vectors than codewords', async () => {
    expect(await codeOf(train(gaussian(3, 2, 1), 2, { k: 4, init: 'split' }))).toBe('ENGINE_TOO_FEW_VECTORS');
  });

  it('rejects fewer distinct vectors than codewords for every init', async () => {
    const vectors = new Float32Array(200).map((_, i) => i % 3);
    for (const init of ['random', 'kmeans++', 'split'] as const) {
      expect(await codeOf(train(vectors, 1, { k: 4, init }))).toBe('ENGINE_TOO_FEW_DISTINCT_VECTORS');
    }
  });

  it('rejects malformed input with ENGINE_INVALID_INPUT', async () => {
    const v = gaussian(50, 2, 2);
    const bad: Array<[Float32Array, number, Record<string, unknown>]> = [
      [v, 3, { k: 2, init: 'split' }],
      [v, 0, { k: 2, init: 'split' }],
      [new Float32Array([1, Number.NaN, 2, 3]), 2, { k: 1, init: 'split' }],
      [v, 2, { k: 0, init: 'split' }],
      [v, 2, { k: 2.5, init: 'split' }],
      [v, 2, { k: 2, init: 'median' }],
      [v, 2, { k: 2, init: 'split', epsilon: -1 }],
      [v, 2, { k: 2, init: 'split', maxIterations: -1 }],
      [v, 2, { k: 2, init: 'random', initialCodewords: new Float32Array(3) }],
      [v, 2, { k: 2, init: 'random', threads: 0 }],
    ];
    for (const [vectors, d, options] of bad) {
      expect(await codeOf(train(vectors, d, options as never))).toBe('ENGINE_INVALID_INPUT');
    }
  });

  it('ends training at a fixed point even with epsilon 0', async () => {
    // A zero drop in distortion means the codebook no longer changes; epsilon 0 must not run every allowed pass.
    const one = await train(gaussian(500, 2, 4), 2, { k: 1, init: 'split', epsilon: 0, maxIterations: 1000 });
    expect(one.codebooks[0].iterations).toBeLessThanOrEqual(2);
    const sweep = await train(gaussian(400, 2, 5), 2, { k: 8, init: 'split', epsilon: 0, maxIterations: 1000 });
    for (const book of sweep.codebooks) {
      expect(book.iterations).toBeLessThan(1000);
      // Lloyd's last pass is where the distortion stopped dropping: nothing after a zero drop (a kept round of
      // codeword shifts, one entry marked `shifted`, may follow and lower it further).
      const own = book.trace.filter((s) => s.size === book.size && s.shifted === undefined);
      const last = own.at(-1)!;
      const before = own.at(-2);
      if (before) expect(last.distortion).toBeGreaterThanOrEqual(before.distortion);
    }
  });

  it('keeps every LBG size with K last when K is not a power of two', async () => {
    const result = await train(gaussian(3000, 3, 3), 3, { k: 12, init: 'split' });
    expect(result.codebooks.map((b) => b.size)).toEqual([1, 2, 4, 8, 12]);
    expect(result.dimension).toBe(3);
    expect(result.vectorCount).toBe(3000);
    for (const b of result.codebooks) expect(b.codewords.length).toBe(b.size * 3);
  });

  it('trains one codebook from given codewords without initialising', async () => {
    const vectors = gaussian(1000, 2, 4);
    const start = vectors.slice(0, 8);
    const result = await train(vectors, 2, { k: 4, init: 'split', initialCodewords: start, maxIterations: 0 });
    expect(result.codebooks).toHaveLength(1);
    expect(Array.from(result.codebooks[0].codewords)).toEqual(Array.from(start));
    expect(result.codebooks[0].trace).toHaveLength(1);
  });

  it('stops at the relative-drop threshold or the iteration cap', async () => {
    const vectors = gaussian(4000, 4, 5);
    const capped = (await train(vectors, 4, { k: 16, init: 'random', epsilon: 0, maxIterations: 3 })).codebooks[0];
    expect(capped.iterations).toBe(3);
    const loose = (await train(vectors, 4, { k: 16, init: 'random', epsilon: 0.05 })).codebooks[0];
    const t = loose.trace;
    const lastDrop = (t[t.length - 2].distortion - t[t.length - 1].distortion) / t[t.length - 1].distortion;
    expect(lastDrop).toBeLessThan(0.05);
    for (let i = 1; i < t.length - 1; i++) {
      expect((t[i - 1].distortion - t[i].distortion) / t[i].distortion).toBeGreaterThanOrEqual(0.05);
    }
  });

  it('reports every iteration and a progress fraction that rises to 1', async () => {
    const seen: number[] = [];
    const progress: TrainProgress[] = [];
    const result = await train(gaussian(2000, 2, 6), 2, {
      k: 8, init: 'split', onIteration: (s) => seen.push(s.iteration), onProgress: (p) => progress.push(p),
    });
    const traced = result.codebooks.flatMap((b) => b.trace.map((s) => s.iteration));
    expect(seen).toEqual(traced);
    for (let i = 1; i < progress.length; i++) expect(progress[i].fraction).toBeGreaterThanOrEqual(progress[i - 1].fraction);
    expect(progress[progress.length - 1].fraction).toBe(1);
    expect(progress.every((p) => p.targetSize === 8)).toBe(true);
  });
});
