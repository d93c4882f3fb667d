import { describe, expect, it } from 'vitest';
import { bjontegaard, integratePolynomial, polyfit } from '../../server/engine/metrics/bd-rate';

// A typical convex PSNR–rate curve (invented values with the usual shape: ~6 dB per doubled rate at high rate).
const reference = [
  { rate: 0.125, psnr: 24.1 },
  { rate: 0.25, psnr: 26.9 },
  { rate: 0.5, psnr: 30.2 },
  { rate: 1, psnr: 34.0 },
  { rate: 2, psnr: 38.6 },
];

describe('Bjøntegaard delta metrics (VCEG-M33, 2001)', () => {
  it('gives 0 for a curve compared with itself', () => {
    const r = bjontegaard(reference, reference);
    expect(r.bdRate).toBeCloseTo(0, 10);
    expect(r.bdPsnr).toBeCloseTo(0, 10);
  });

  it('gives −10 % when every rate is scaled by 0.9 at the same PSNR', () => {
    // Identity of the definition: log-rate shifts by ln 0.9 everywhere, so the mean difference is ln 0.9.
    const test = reference.map((p) => ({ rate: p.rate * 0.9, psnr: p.psnr }));
    const r = bjontegaard(reference, test);
    expect(r.bdRate).not.toBeNull();
    expect(Math.abs((r.bdRate as number) - -10)).toBeLessThan(0.1);
    expect(r.bdPsnr).toBeGreaterThan(0);
  });

  it('gives +0.5 dB when every PSNR rises by 0.5 dB at the same rates', () => {
    // Identity of the definition: the fitted cubic shifts by the constant.
    const test = reference.map((p) => ({ rate: p.rate, psnr: p.psnr + 0.5 }));
    const r = bjontegaard(reference, test);
    expect(r.bdPsnr).toBeCloseTo(0.5, 9);
    expect(r.bdRate).toBeLessThan(0);
  });

  it('is antisymmetric in BD-PSNR when the roles swap', () => {
    const test = reference.map((p, i) => ({ rate: p.rate * (1 + 0.05 * i), psnr: p.psnr - 0.2 }));
    const ab = bjontegaard(reference, test);
    const ba = bjontegaard(test, reference);
    expect(ab.bdPsnr! + ba.bdPsnr!).toBeCloseTo(0, 9);
  });

  it('reports no BD-rate when the PSNR ranges do not overlap', () => {
    const test = reference.map((p) => ({ rate: p.rate, psnr: p.psnr + 40 }));
    expect(bjontegaard(reference, test).bdRate).toBeNull();
  });

  it('drops lossless points (PSNR = ∞) and refuses curves with fewer than 3 usable points', () => {
    const withLossless = [...reference, { rate: 8, psnr: Infinity }];
    expect(bjontegaard(reference, withLossless).bdRate).toBeCloseTo(0, 9);
    expect(() => bjontegaard(reference.slice(0, 2), reference)).toThrow(/at least 3 points/);
  });
});

describe('least-squares polynomial fit', () => {
  it('recovers an exact cubic from more points than coefficients', () => {
    // y = 2 − 3x + 0.5x² + 0.25x³ sampled at 7 points: least squares must return it exactly (algebra).
    const xs = [-2, -1, -0.5, 0, 1, 2.5, 3];
    const ys = xs.map((x) => 2 - 3 * x + 0.5 * x ** 2 + 0.25 * x ** 3);
    const c = polyfit(xs, ys, 3);
    [2, -3, 0.5, 0.25].forEach((v, i) => expect(c[i]).toBeCloseTo(v, 9));
  });

  it('integrates x² over [0, 3] to 9', () => {
    expect(integratePolynomial([0, 0, 1], 0, 3)).toBeCloseTo(9, 12);
  });
});
