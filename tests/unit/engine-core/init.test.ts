import { afterAll, describe, expect, it } from 'vitest';
import { createRng, shardLayout, shutdownEngineWorkers, threadBudget, train } from '../../../server/engine/training/index';
import { initKmeansPlusPlus, initRandom } from '../../../server/engine/core/init';
import { referenceKmeansPlusPlus } from '../../helpers/reference-kmeans-plus-plus';

const rowsOf = (a: Float32Array, d: number) =>
  Array.from({ length: a.length / d }, (_, v) => Array.from(a.subarray(v * d, (v + 1) * d)).join(','));

afterAll(() => shutdownEngineWorkers());

describe('initRandom', () => {
  it('picks K distinct training vectors, the same for a seed', () => {
    const d = 2;
    // 30 vectors, only 10 distinct values (each three times).
    const vectors = new Float32Array(60).map((_, i) => Math.floor(i / 2) % 10 + (i % 2) * 0.5);
    const a = initRandom(vectors, d, 10, createRng(4));
    const b = initRandom(vectors, d, 10, createRng(4));
    expect(Array.from(a)).toEqual(Array.from(b));
    const picked = rowsOf(a, d);
    expect(new Set(picked).size).toBe(10);
    const training = new Set(rowsOf(vectors, d));
    for (const p of picked) expect(training.has(p)).toBe(true);
  });
});

describe('initKmeansPlusPlus', () => {
  it('draws the second codeword with probability proportional to D² (Arthur & Vassilvitskii 2007)', async () => {
    // Points 0, 1, 3 on a line. Over many seeds, among runs whose first pick is 0 the D²
    // rule of the paper gives P(second = 1) = 1/(1 + 9) and P(second = 3) = 9/10.
    const vectors = new Float32Array([0, 1, 3]);
    let firstZero = 0;
    let thenThree = 0;
    for (let seed = 1; seed <= 6000; seed++) {
      const c = await initKmeansPlusPlus(vectors, 1, 2, createRng(seed));
      if (c[0] !== 0) continue;
      firstZero++;
      if (c[1] === 3) thenThree++;
    }
    // First pick is uniform: about a third of the seeds (binomial, 5 sigma).
    expect(Math.abs(firstZero / 6000 - 1 / 3)).toBeLessThan(5 * Math.sqrt((1 / 3) * (2 / 3) / 6000));
    const p = thenThree / firstZero;
    expect(Math.abs(p - 0.9)).toBeLessThan(5 * Math.sqrt(0.09 / firstZero));
  });

  it('never picks a training vector twice', async () => {
    const rng = createRng(8);
    const vectors = new Float32Array(400).map(() => Math.round(rng.next() * 20));
    const c = await initKmeansPlusPlus(vectors, 2, 40, createRng(2));
    expect(new Set(rowsOf(c, 2)).size).toBe(40);
  });

  it('picks the same with its D² on worker threads of several shards as the plain rule with the shard-order draw', async () => {
    // Two shards (N ≥ 2 × 16,384), each large enough (n·d ≥ 2²⁰) that its D² updates go to the worker threads.
    const d = 64;
    const k = 48;
    const vectors = clustered(9, 2 * 16_384 + 700, d, 20);
    expect(shardLayout(vectors.length / d).count).toBe(2);
    const reference = referenceKmeansPlusPlus(vectors, d, k, createRng(31));
    for (const threads of [1, threadBudget.total]) {
      // maxIterations 0: the codebook is the seeding itself.
      const result = await train(vectors, d, { k, init: 'kmeans++', seed: 31, maxIterations: 0, threads });
      expect(Buffer.from(result.codebooks[0].codewords.buffer).equals(Buffer.from(reference.buffer))).toBe(true);
    }
    // The same rule on the calling thread, without an executor.
    const plain = await initKmeansPlusPlus(vectors, d, k, createRng(31));
    expect(Buffer.from(plain.buffer).equals(Buffer.from(reference.buffer))).toBe(true);
  });

  it('picks exactly what the unpruned D² rule picks, on clustered data and on data with repeats, in one shard and in three', async () => {
    for (const [seed, n, d, k] of [[1, 3000, 16, 64], [2, 3000, 3, 200], [3, 3000, 48, 32], [4, 3 * 16_384 + 5, 3, 200]] as const) {
      const vectors = clustered(seed, n, d, 12);
      const pruned = await initKmeansPlusPlus(vectors, d, k, createRng(seed + 10));
      const reference = referenceKmeansPlusPlus(vectors, d, k, createRng(seed + 10));
      expect(Buffer.from(pruned.buffer).equals(Buffer.from(reference.buffer))).toBe(true);
    }
  });
});

/** Gaussian-ish blobs (sum of uniforms) around a few centres, rounded so that some vectors repeat. */
function clustered(seed: number, n: number, d: number, blobs: number): Float32Array {
  const rng = createRng(seed);
  const centres = Array.from({ length: blobs }, () => Array.from({ length: d }, () => rng.next() * 255));
  const out = new Float32Array(n * d);
  for (let v = 0; v < n; v++) {
    const c = centres[rng.nextInt(blobs)];
    for (let i = 0; i < d; i++) out[v * d + i] = Math.round(c[i] + (rng.next() + rng.next() + rng.next() - 1.5) * 12);
  }
  return out;
}
