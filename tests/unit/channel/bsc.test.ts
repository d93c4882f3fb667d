// The binary symmetric channel: flip counts against the binomial law, determinism for a seed.
import { describe, expect, it } from 'vitest';
import { createRng, flipBits } from '../../../server/engine';

/** log of the binomial pmf C(n,k) p^k (1−p)^(n−k), through log-gamma by summed logs (n is small here). */
function binomialPmf(n: number, k: number, p: number): number {
  let logC = 0;
  for (let i = 1; i <= k; i += 1) logC += Math.log(n - k + i) - Math.log(i);
  return Math.exp(logC + k * Math.log(p) + (n - k) * Math.log1p(-p));
}

describe('flipBits', () => {
  it('flips a count of bits that follows the binomial law B(n, p)', () => {
    // n = 64 bits per trial, p = 0.05: Pearson's chi-square over the counts 0..8 and "9 or more", 4000 trials.
    const n = 64;
    const p = 0.05;
    const trials = 4000;
    const rng = createRng(7);
    const observed = new Array<number>(10).fill(0);
    let total = 0;
    for (let t = 0; t < trials; t += 1) {
      const flips = flipBits(new Uint8Array(n / 8), p, rng);
      total += flips;
      observed[Math.min(9, flips)] += 1;
    }
    const expected = observed.map((_, k) => (k < 9 ? binomialPmf(n, k, p) : 1 - Array.from({ length: 9 }, (_, j) => binomialPmf(n, j, p)).reduce((a, b) => a + b)) * trials);
    const chi2 = observed.reduce((a, o, k) => a + (o - expected[k]) ** 2 / expected[k], 0);
    // 9 degrees of freedom: the 0.999 quantile of chi-square(9) is 27.88 (standard tables, e.g. NIST/SEMATECH e-Handbook 1.3.6.7.4).
    expect(chi2).toBeLessThan(27.88);
    // Mean np = 3.2 with standard error sqrt(np(1−p)/trials) ≈ 0.0276: within five of them.
    expect(Math.abs(total / trials - n * p)).toBeLessThan(5 * Math.sqrt((n * p * (1 - p)) / trials));
  });

  it('flips exactly the bits that differ, at a rate near p over a long buffer', () => {
    const bytes = new Uint8Array(1 << 16);
    const flips = flipBits(bytes, 1e-3, createRng(3));
    let ones = 0;
    for (const b of bytes) for (let k = 0; k < 8; k += 1) ones += (b >> k) & 1;
    expect(ones).toBe(flips);
    // 524288 bits at 10^-3: mean 524.3, standard deviation 22.9.
    expect(Math.abs(flips - 524.288)).toBeLessThan(5 * 22.9);
  });

  it('gives the same flips for the same seed and leaves bytes outside the range alone', () => {
    const a = new Uint8Array(4096);
    const b = new Uint8Array(4096);
    flipBits(a, 0.01, createRng(11), 68);
    flipBits(b, 0.01, createRng(11), 68);
    expect(a).toEqual(b);
    expect(a.subarray(0, 68).every((v) => v === 0)).toBe(true);
    expect(a.some((v) => v !== 0)).toBe(true);
  });

  it('flips nothing at p = 0', () => {
    const bytes = new Uint8Array(1000);
    expect(flipBits(bytes, 0, createRng(1))).toBe(0);
    expect(bytes.every((v) => v === 0)).toBe(true);
  });
});
