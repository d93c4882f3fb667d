import { describe, expect, it } from 'vitest';
import { createRng } from '../../../server/engine/core/index';
import { initKmeansPlusPlus, initRandom } from '../../../server/engine/core/init';

const rowsOf = (a: Float32Array, d: number) =>
  Array.from({ length: a.length / d }, (_, v) => Array.from(a.subarray(v * d, (v + 1) * d)).join(','));

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

  it('fails clearly when there are fewer distinct vectors than K', () => {
    const vectors = new Float32Array([1, 1, 1, 2, 2, 2]);
    expect(() => initRandom(vectors, 1, 3, createRng(1))).toThrow(/distinct/);
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
});
