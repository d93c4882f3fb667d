import { afterAll, describe, expect, it } from 'vitest';
import { createRng, shutdownEngineWorkers, threadBudget } from '../../../server/engine/training/index';
import { NearestSearch } from '../../../server/engine/parallel/nearest-search';
import { exactDistance } from '../../../server/engine/core/exact-distance';
import { initKmeansPlusPlus, initRandom } from '../../../server/engine/core/init';
import type { Rng } from '../../../server/engine/core/rng';

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

  it('picks the same on the worker threads as on the calling thread, and as the unpruned rule', async () => {
    const d = 64;
    const k = 96;
    const vectors = clustered(9, 24_000, d, 20);
    const search = await NearestSearch.open(vectors, d, { threads: threadBudget.total, maxK: k });
    try {
      // Large enough that each step goes to the workers (they share the state, not copies of it).
      const parallel = search.seeding(k)!;
      expect(search.threads).toBe(threadBudget.total);
      expect(parallel.state.minDist.buffer).toBeInstanceOf(SharedArrayBuffer);
      // A step handed to the workers is awaited; one on this thread returns at once.
      const step = parallel.update(0);
      expect(step).toBeInstanceOf(Promise);
      await step;
      const onWorkers = await initKmeansPlusPlus(vectors, d, k, createRng(31), undefined, parallel);
      const literal = literalKmeansPlusPlus(vectors, d, k, createRng(31));
      expect(Buffer.from(onWorkers.buffer).equals(Buffer.from(literal.buffer))).toBe(true);
    } finally {
      search.close();
    }
  });

  it('picks exactly what the unpruned D² rule picks, on clustered data and on data with repeats', async () => {
    for (const [seed, d, k] of [[1, 16, 64], [2, 3, 200], [3, 48, 32]] as const) {
      const vectors = clustered(seed, 3000, d, 12);
      const pruned = await initKmeansPlusPlus(vectors, d, k, createRng(seed + 10));
      const literal = literalKmeansPlusPlus(vectors, d, k, createRng(seed + 10));
      expect(Buffer.from(pruned.buffer).equals(Buffer.from(literal.buffer))).toBe(true);
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

/**
 * The seeding exactly as the paper states it (Arthur & Vassilvitskii 2007, §2.2): every distance to the newest
 * centre computed, the next one drawn by D² weight, with the same random stream and summation order.
 */
function literalKmeansPlusPlus(vectors: Float32Array, d: number, k: number, rng: Rng): Float32Array {
  const n = vectors.length / d;
  const out = new Float32Array(k * d);
  const minDist = new Float64Array(n).fill(Infinity);
  let pick = rng.nextInt(n);
  for (let c = 0; c < k; c++) {
    if (c > 0) {
      let total = 0;
      for (let v = 0; v < n; v++) total += minDist[v];
      const target = rng.next() * total;
      let acc = 0;
      for (let v = 0; v < n; v++) {
        if (minDist[v] === 0) continue;
        acc += minDist[v];
        pick = v;
        if (acc > target) break;
      }
    }
    out.set(vectors.subarray(pick * d, (pick + 1) * d), c * d);
    for (let v = 0; v < n; v++) minDist[v] = Math.min(minDist[v], exactDistance(vectors, v * d, out, c * d, d));
  }
  return out;
}
