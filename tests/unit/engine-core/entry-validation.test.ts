import { afterAll, describe, expect, it } from 'vitest';
import { EngineError, EngineInputError, INIT_METHODS, ITERATIONS, shutdownEngineWorkers, train, trainCodebooks } from '../../../server/engine';
import { initKmeansPlusPlus, initRandom } from '../../../server/engine/core/init';
import { createRng } from '../../../server/engine/core/rng';

afterAll(() => shutdownEngineWorkers());

/** The one error a call ends with, or 'resolved'. */
async function errorOf(p: Promise<unknown>): Promise<Error | 'resolved'> {
  try {
    await p;
  } catch (error) {
    return error as Error;
  }
  return 'resolved';
}

// 200 values, only 3 distinct: 0, 1, 2.
const threeDistinct = new Float32Array(200).map((_, i) => i % 3);
const options = { size: 4, patch: null, preprocessing: { kind: 'none' as const }, source: 'test' };

describe('validation at the engine entry', () => {
  it.each(INIT_METHODS)('refuses fewer distinct vectors than codewords once, at the entry, for %s init', async (init) => {
    const error = await errorOf(trainCodebooks(threeDistinct, 1, { ...options, init }));
    expect(error).toBeInstanceOf(EngineError);
    expect(error).toMatchObject({ code: 'ENGINE_TOO_FEW_DISTINCT_VECTORS', message: 'the training set has only 3 distinct vectors, fewer than 4 codewords' });
  });

  it('refuses an option outside the vocabulary limits with one error that names the field', async () => {
    const vectors = new Float32Array(64).map((_, i) => i);
    const error = await errorOf(trainCodebooks(vectors, 1, { ...options, init: 'split', maxIterations: ITERATIONS.max + 1 }));
    expect(error).toBeInstanceOf(EngineInputError);
    expect(error).toMatchObject({ code: 'ENGINE_INVALID_ARGUMENT', field: 'maxIterations' });
    expect((error as Error).message).toMatch(/^trainCodebooks: maxIterations: /);
  });

  it('refuses malformed vectors at train(), the numeric entry', async () => {
    const error = await errorOf(train(new Float32Array([1, Number.NaN, 2, 3]), 2, { k: 1, init: 'split' }));
    expect(error).toMatchObject({ code: 'ENGINE_INVALID_INPUT', message: 'vectors hold a non-finite value at vector 0, component 1' });
  });
});

describe('the core kernels behind the entry', () => {
  // They trust what the entry checked (DEVELOPERS.md, "Validation once"): given input the entry would refuse they
  // neither check again nor write outside their output.
  it('do not repeat the distinct-vector check in the random init', () => {
    const out = initRandom(new Float32Array([1, 1, 1, 2, 2, 2]), 1, 3, createRng(1));
    expect(out).toHaveLength(3);
  });

  it('do not repeat the distinct-vector check in k-means++ seeding', async () => {
    const out = await initKmeansPlusPlus(new Float32Array([1, 1, 2, 2]), 1, 3, createRng(1));
    expect(out).toHaveLength(3);
  });
});
