import { describe, expect, it } from 'vitest';
import { createRng } from '../../../server/engine/training/index';

describe('createRng', () => {
  it('repeats its stream for a seed and differs between seeds', () => {
    const a = createRng(123);
    const b = createRng(123);
    const c = createRng(124);
    const sa = Array.from({ length: 50 }, () => a.next());
    expect(Array.from({ length: 50 }, () => b.next())).toEqual(sa);
    expect(Array.from({ length: 50 }, () => c.next())).not.toEqual(sa);
  });

  it('stays in [0, 1) with the mean and variance of U(0,1)', () => {
    // U(0,1): mean 1/2, variance 1/12 (common practice); bounds are 5 standard errors.
    const rng = createRng(1);
    const n = 200_000;
    let s = 0;
    let s2 = 0;
    for (let i = 0; i < n; i++) {
      const u = rng.next();
      expect(u >= 0 && u < 1).toBe(true);
      s += u;
      s2 += u * u;
    }
    const mean = s / n;
    const variance = s2 / n - mean * mean;
    expect(Math.abs(mean - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / n));
    expect(Math.abs(variance - 1 / 12)).toBeLessThan(0.002);
  });

  it('draws unbiased integers below n (chi-square over 10 bins)', () => {
    // Pearson chi-square with 9 degrees of freedom: the 0.999 quantile is 27.88
    // (standard chi-square tables; common practice).
    const rng = createRng(77);
    const bins = new Array(10).fill(0);
    const n = 100_000;
    for (let i = 0; i < n; i++) {
      const v = rng.nextInt(10);
      expect(Number.isInteger(v) && v >= 0 && v < 10).toBe(true);
      bins[v]++;
    }
    const chi2 = bins.reduce((s, o) => s + (o - n / 10) ** 2 / (n / 10), 0);
    expect(chi2).toBeLessThan(27.88);
  });

  it('draws standard normals: mean 0, variance 1, 95.45 % within two sigma', () => {
    // Standard normal: P(|Z| < 2) = 0.9545 (standard normal tables; common practice).
    const rng = createRng(3);
    const n = 200_000;
    let s = 0;
    let s2 = 0;
    let inside = 0;
    for (let i = 0; i < n; i++) {
      const z = rng.normal();
      s += z;
      s2 += z * z;
      if (Math.abs(z) < 2) inside++;
    }
    expect(Math.abs(s / n)).toBeLessThan(5 / Math.sqrt(n));
    expect(Math.abs(s2 / n - 1)).toBeLessThan(0.02);
    expect(Math.abs(inside / n - 0.9545)).toBeLessThan(0.003);
  });

  it('rejects a bad range for nextInt', () => {
    const rng = createRng(1);
    expect(() => rng.nextInt(0)).toThrow(RangeError);
    expect(() => rng.nextInt(2.5)).toThrow(RangeError);
  });
});
