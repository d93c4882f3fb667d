import { describe, expect, it } from 'vitest';
import { bjontegaard, integrateHermite, integratePolynomial, pchipSlopes, polyfit } from '../../server/engine/metrics/bd-rate';
import { BD_METHODS, BD_MIN_OVERLAP_FRACTION } from '../../server/engine/vocabulary';

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

// Hand-computed cases, for both ways of drawing a curve: a constant shift in log rate or in PSNR moves either
// fit by exactly that constant (both are linear in the values they fit and keep a constant), and a straight line
// is reproduced exactly by both (the cubic has it among its polynomials; Fritsch–Carlson slopes of collinear
// points are the line's slope), so the averages below follow from integrating lines by hand.
describe.each(BD_METHODS)('hand-computed Bjøntegaard deltas, %s', (method) => {
  it('gives 0 for identical curves', () => {
    const r = bjontegaard(reference, reference, method);
    expect(r.method).toBe(method);
    expect(r.bdRate).toBeCloseTo(0, 10);
    expect(r.bdPsnr).toBeCloseTo(0, 10);
    expect(r.shortOverlap).toBe(false);
  });

  it('gives −20 % when every rate is multiplied by 0.8 at the same PSNR', () => {
    // log rate shifts by ln 0.8 at every PSNR, so the mean difference is ln 0.8 and e^(ln 0.8) − 1 = −0.2.
    const r = bjontegaard(reference, reference.map((p) => ({ rate: p.rate * 0.8, psnr: p.psnr })), method);
    expect(r.bdRate).toBeCloseTo(-20, 9);
  });

  it('gives +25 % when every rate is multiplied by 1.25', () => {
    expect(bjontegaard(reference, reference.map((p) => ({ rate: p.rate * 1.25, psnr: p.psnr })), method).bdRate).toBeCloseTo(25, 9);
  });

  it('gives the offset as BD-PSNR when every PSNR rises by 0.75 dB at the same rates', () => {
    const r = bjontegaard(reference, reference.map((p) => ({ rate: p.rate, psnr: p.psnr + 0.75 })), method);
    expect(r.bdPsnr).toBeCloseTo(0.75, 10);
    expect(r.bdRate).toBeLessThan(0);
  });

  it('averages only over the interval the curves share', () => {
    // Reference: PSNR = 30 + 2 ln R for ln R in 0..3; test: PSNR = 30 + 3 ln R for ln R in 1.5..4.5.
    // Shared log rate [1.5, 3]: BD-PSNR = mean of ln R over it = 2.25 dB (over the test's whole range it would be 3).
    // Shared PSNR [34.5, 36]: ln R differs by (P − 30)/3 − (P − 30)/2 = −(P − 30)/6, mean −5.25/6 = −0.875,
    // so BD-rate = (e^−0.875 − 1) · 100 %.
    const line = (a: number, lnRates: number[]) => lnRates.map((l) => ({ rate: Math.exp(l), psnr: 30 + a * l }));
    const r = bjontegaard(line(2, [0, 1, 2, 3]), line(3, [1.5, 2.5, 3.5, 4.5]), method);
    expect(r.overlap.logRate![0]).toBeCloseTo(1.5, 12);
    expect(r.overlap.logRate![1]).toBeCloseTo(3, 12);
    expect(r.overlap.psnr).toEqual([34.5, 36]);
    expect(r.bdPsnr).toBeCloseTo(2.25, 9);
    expect(r.bdRate).toBeCloseTo((Math.exp(-0.875) - 1) * 100, 9);
    // Rate: 1.5 of the shorter span 3 → 0.5; PSNR: 1.5 dB of the reference's 6 dB → 0.25, under the threshold.
    expect(r.overlapFraction.rate).toBeCloseTo(0.5, 12);
    expect(r.overlapFraction.psnr).toBeCloseTo(0.25, 12);
    expect(BD_MIN_OVERLAP_FRACTION).toBeGreaterThan(0.25);
    expect(r.shortOverlap).toBe(true);
  });

  it('does not warn when the shared interval covers the shorter curve', () => {
    const inside = reference.slice(1, 4).map((p) => ({ rate: p.rate, psnr: p.psnr + 0.1 }));
    const r = bjontegaard(reference, inside, method);
    expect(r.overlapFraction.rate).toBe(1);
    expect(r.shortOverlap).toBe(false);
  });
});

describe('the two fits differ where a cubic cannot pass through every point', () => {
  it('gives different BD-PSNR for a curve with a knee', () => {
    const knee = [
      { rate: 0.1, psnr: 20 }, { rate: 0.2, psnr: 26 }, { rate: 0.4, psnr: 27 }, { rate: 0.8, psnr: 27.5 }, { rate: 1.6, psnr: 33 }, { rate: 3.2, psnr: 34 },
    ];
    const cubic = bjontegaard(reference, knee, 'cubic').bdPsnr!;
    const pchip = bjontegaard(reference, knee, 'pchip').bdPsnr!;
    expect(Math.abs(cubic - pchip)).toBeGreaterThan(0.01);
  });
});

describe('monotone piecewise-cubic interpolation (Fritsch & Carlson 1980)', () => {
  it('keeps a flat stretch flat instead of overshooting it', () => {
    // Data 0, 1, 1, 2: the slope at a point where a secant is 0 is 0 (the monotonicity condition).
    const m = pchipSlopes([0, 1, 2, 3], [0, 1, 1, 2]);
    expect(m[1]).toBe(0);
    expect(m[2]).toBe(0);
  });

  it('integrates y = x² through knots 0..3 with exact slopes to 9', () => {
    // A Hermite cubic with the exact derivative reproduces any cubic, so ∫_0^3 x² dx = 9 (algebra).
    expect(integrateHermite([0, 1, 2, 3], [0, 1, 4, 9], [0, 2, 4, 6], 0, 3)).toBeCloseTo(9, 12);
    expect(integrateHermite([0, 1, 2, 3], [0, 1, 4, 9], [0, 2, 4, 6], 0.5, 2.5)).toBeCloseTo((2.5 ** 3 - 0.5 ** 3) / 3, 12);
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
