import { BD_MIN_OVERLAP_FRACTION, BD_MIN_POINTS, DEFAULT_BD_METHOD, type BdMethod } from '../vocabulary';

/**
 * Bjøntegaard delta metrics between two rate–distortion curves (G. Bjøntegaard, "Calculation of
 * average PSNR differences between RD-curves", ITU-T VCEG-M33, 2001):
 *  - BD-PSNR: PSNR as a function of log rate for each curve, integrated over the log-rate interval both curves
 *    cover; the mean difference (test − reference), in dB.
 *  - BD-rate: log rate as a function of PSNR, integrated over the PSNR interval both curves cover; the mean
 *    difference Δ reported as (e^Δ − 1) · 100 %, negative when the test curve needs fewer bits.
 * Each curve is drawn through its points by one of BD_METHODS (vocabulary.ts): VCEG-M33's cubic polynomial (the
 * original uses exactly four points; with more we fit by least squares, common practice; with three the fit is of
 * degree 2, flagged through `degree`), or the monotone piecewise-cubic Hermite interpolant (Fritsch & Carlson 1980).
 * Nothing is extrapolated: outside the shared interval neither curve says anything about the other.
 */
export interface RdPoint {
  rate: number; // bits per pixel, > 0
  psnr: number; // dB, finite
}

export interface BdResult {
  method: BdMethod;
  bdRate: number | null; // percent; null when the curves share no PSNR interval
  bdPsnr: number | null; // dB; null when the curves share no rate interval
  degree: number; // cubic: polynomial degree used (3 unless a curve has fewer than 4 usable points); pchip: 3
  /** The shared intervals the figures are averaged over: natural-log rate (BD-PSNR) and PSNR in dB (BD-rate). */
  overlap: { logRate: [number, number] | null; psnr: [number, number] | null };
  /** Each shared interval as a fraction of the shorter curve's own span in that variable (0 when none is shared). */
  overlapFraction: { rate: number; psnr: number };
  /** True when a computed figure rests on a shared interval under BD_MIN_OVERLAP_FRACTION of the shorter curve. */
  shortOverlap: boolean;
}

export class BdRateError extends Error {}

/** Points with positive rate and finite PSNR, sorted by rate; lossless points (PSNR = ∞) cannot be fitted. */
function usable(points: readonly RdPoint[]): RdPoint[] {
  return points
    .filter((p) => Number.isFinite(p.rate) && p.rate > 0 && Number.isFinite(p.psnr))
    .slice()
    .sort((a, b) => a.rate - b.rate);
}

/**
 * Least-squares polynomial fit y ≈ Σ c_k x^k, solved through Householder QR on x centred and scaled to
 * [−1, 1] so that the Vandermonde matrix stays well conditioned; returns coefficients in the original x.
 */
export function polyfit(xs: readonly number[], ys: readonly number[], degree: number): number[] {
  const n = xs.length;
  const m = degree + 1;
  if (n < m) throw new BdRateError(`a degree-${degree} fit needs ${m} points, got ${n}`);
  const lo = Math.min(...xs);
  const hi = Math.max(...xs);
  const centre = (lo + hi) / 2;
  const half = (hi - lo) / 2 || 1;
  // A: n × m, column-major copies for the QR sweep.
  const a: number[][] = [];
  for (let k = 0; k < m; k++) a.push(xs.map((x) => ((x - centre) / half) ** k));
  const b = ys.slice();
  for (let k = 0; k < m; k++) {
    let norm = 0;
    for (let i = k; i < n; i++) norm += a[k][i] * a[k][i];
    norm = Math.sqrt(norm);
    if (norm === 0) throw new BdRateError('points do not determine the fit (repeated rates)');
    const alpha = a[k][k] > 0 ? -norm : norm;
    const v = new Array<number>(n).fill(0);
    for (let i = k; i < n; i++) v[i] = a[k][i];
    v[k] -= alpha;
    let vv = 0;
    for (let i = k; i < n; i++) vv += v[i] * v[i];
    if (vv === 0) continue;
    for (let j = k; j < m; j++) {
      let dot = 0;
      for (let i = k; i < n; i++) dot += v[i] * a[j][i];
      const f = (2 * dot) / vv;
      for (let i = k; i < n; i++) a[j][i] -= f * v[i];
    }
    let dot = 0;
    for (let i = k; i < n; i++) dot += v[i] * b[i];
    const f = (2 * dot) / vv;
    for (let i = k; i < n; i++) b[i] -= f * v[i];
  }
  // Back substitution R c = Qᵀb for coefficients in the scaled variable t = (x − centre)/half.
  const c = new Array<number>(m).fill(0);
  for (let k = m - 1; k >= 0; k--) {
    let s = b[k];
    for (let j = k + 1; j < m; j++) s -= a[j][k] * c[j];
    if (Math.abs(a[k][k]) < 1e-14) throw new BdRateError('points do not determine the fit (repeated rates)');
    c[k] = s / a[k][k];
  }
  // Expand Σ c_k ((x − centre)/half)^k into powers of x.
  const out = new Array<number>(m).fill(0);
  for (let k = 0; k < m; k++) {
    // ((x − centre)/half)^k = Σ_j binom(k, j) x^j (−centre)^(k−j) / half^k
    let binom = 1;
    for (let j = 0; j <= k; j++) {
      out[j] += (c[k] * binom * (-centre) ** (k - j)) / half ** k;
      binom = (binom * (k - j)) / (j + 1);
    }
  }
  return out;
}

/** ∫_lo^hi Σ c_k x^k dx */
export function integratePolynomial(coefficients: readonly number[], lo: number, hi: number): number {
  let s = 0;
  for (let k = 0; k < coefficients.length; k++) s += (coefficients[k] * (hi ** (k + 1) - lo ** (k + 1))) / (k + 1);
  return s;
}

function overlap(a: readonly number[], b: readonly number[]): [number, number] | null {
  const lo = Math.max(Math.min(...a), Math.min(...b));
  const hi = Math.min(Math.max(...a), Math.max(...b));
  return hi > lo ? [lo, hi] : null;
}

function overlapFraction(span: [number, number] | null, a: readonly number[], b: readonly number[]): number {
  if (!span) return 0;
  const shorter = Math.min(Math.max(...a) - Math.min(...a), Math.max(...b) - Math.min(...b));
  return shorter > 0 ? Math.min(1, (span[1] - span[0]) / shorter) : 0;
}

/**
 * Slopes of the monotone piecewise-cubic Hermite interpolant through (xs, ys), xs strictly increasing, as
 * Fritsch & Carlson (1980) make them shape-preserving: at an interior point the weighted harmonic mean of the two
 * secant slopes (Fritsch & Butland's form), 0 where the secants change sign or one is flat; at the ends the
 * one-sided three-point formula, set to 0 when its sign differs from the first secant and limited to three times
 * that secant when the secants change sign (the rules SciPy's PchipInterpolator documents).
 */
export function pchipSlopes(xs: readonly number[], ys: readonly number[]): number[] {
  const n = xs.length;
  const h = xs.slice(1).map((x, i) => x - xs[i]);
  const d = h.map((hi, i) => (ys[i + 1] - ys[i]) / hi);
  if (n === 2) return [d[0], d[0]];
  const m = new Array<number>(n).fill(0);
  for (let k = 1; k < n - 1; k++) {
    if (d[k - 1] === 0 || d[k] === 0 || Math.sign(d[k - 1]) !== Math.sign(d[k])) continue;
    const w1 = 2 * h[k] + h[k - 1];
    const w2 = h[k] + 2 * h[k - 1];
    m[k] = (w1 + w2) / (w1 / d[k - 1] + w2 / d[k]);
  }
  const end = (h0: number, h1: number, d0: number, d1: number) => {
    const s = ((2 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
    if (Math.sign(s) !== Math.sign(d0)) return 0;
    if (Math.sign(d0) !== Math.sign(d1) && Math.abs(s) > Math.abs(3 * d0)) return 3 * d0;
    return s;
  };
  m[0] = end(h[0], h[1], d[0], d[1]);
  m[n - 1] = end(h[n - 2], h[n - 3], d[n - 2], d[n - 3]);
  return m;
}

/** ∫ of the Hermite cubic with knots (xs, ys) and slopes m over [lo, hi] ⊆ [xs[0], xs[n−1]], segment by segment. */
export function integrateHermite(xs: readonly number[], ys: readonly number[], m: readonly number[], lo: number, hi: number): number {
  // Antiderivatives in t ∈ [0, 1] of the Hermite basis h00, h10, h01, h11.
  const H00 = (t: number) => t ** 4 / 2 - t ** 3 + t;
  const H10 = (t: number) => t ** 4 / 4 - (2 * t ** 3) / 3 + t ** 2 / 2;
  const H01 = (t: number) => -(t ** 4) / 2 + t ** 3;
  const H11 = (t: number) => t ** 4 / 4 - t ** 3 / 3;
  let sum = 0;
  for (let k = 0; k < xs.length - 1; k++) {
    const a = Math.max(lo, xs[k]);
    const b = Math.min(hi, xs[k + 1]);
    if (b <= a) continue;
    const h = xs[k + 1] - xs[k];
    const F = (t: number) => ys[k] * H00(t) + h * m[k] * H10(t) + ys[k + 1] * H01(t) + h * m[k + 1] * H11(t);
    sum += h * (F((b - xs[k]) / h) - F((a - xs[k]) / h));
  }
  return sum;
}

/** Points sorted by x; a repeated x cannot be interpolated through (two values at one abscissa). */
function strictlyIncreasing(xs: readonly number[], ys: readonly number[]): { xs: number[]; ys: number[] } {
  const order = xs.map((_, i) => i).sort((i, j) => xs[i] - xs[j]);
  const sx = order.map((i) => xs[i]);
  for (let k = 1; k < sx.length; k++) {
    if (sx[k] === sx[k - 1]) throw new BdRateError('points do not determine the curve (two points at one rate or one PSNR)');
  }
  return { xs: sx, ys: order.map((i) => ys[i]) };
}

/** ∫_lo^hi of the curve through (xs, ys) drawn by `method`. */
function integrateCurve(method: BdMethod, degree: number, xs: readonly number[], ys: readonly number[], lo: number, hi: number): number {
  if (method === 'cubic') return integratePolynomial(polyfit(xs, ys, degree), lo, hi);
  const sorted = strictlyIncreasing(xs, ys);
  return integrateHermite(sorted.xs, sorted.ys, pchipSlopes(sorted.xs, sorted.ys), lo, hi);
}

/** BD-rate and BD-PSNR of `test` against `reference`, each curve drawn by `method` (DEFAULT_BD_METHOD unless named). */
export function bjontegaard(reference: readonly RdPoint[], test: readonly RdPoint[], method: BdMethod = DEFAULT_BD_METHOD): BdResult {
  const r = usable(reference);
  const t = usable(test);
  if (r.length < BD_MIN_POINTS || t.length < BD_MIN_POINTS) {
    throw new BdRateError(`each curve needs at least ${BD_MIN_POINTS} points with a positive rate and a finite PSNR`);
  }
  const degree = method === 'cubic' ? Math.min(3, r.length - 1, t.length - 1) : 3;
  const lr = r.map((p) => Math.log(p.rate));
  const lt = t.map((p) => Math.log(p.rate));
  const dr = r.map((p) => p.psnr);
  const dt = t.map((p) => p.psnr);

  const rateSpan = overlap(lr, lt);
  let bdPsnr: number | null = null;
  if (rateSpan) {
    const [lo, hi] = rateSpan;
    bdPsnr = (integrateCurve(method, degree, lt, dt, lo, hi) - integrateCurve(method, degree, lr, dr, lo, hi)) / (hi - lo);
  }

  const psnrSpan = overlap(dr, dt);
  let bdRate: number | null = null;
  if (psnrSpan) {
    const [lo, hi] = psnrSpan;
    const meanLogDiff = (integrateCurve(method, degree, dt, lt, lo, hi) - integrateCurve(method, degree, dr, lr, lo, hi)) / (hi - lo);
    bdRate = (Math.exp(meanLogDiff) - 1) * 100;
  }
  const fraction = { rate: overlapFraction(rateSpan, lr, lt), psnr: overlapFraction(psnrSpan, dr, dt) };
  const shortOverlap = (bdPsnr !== null && fraction.rate < BD_MIN_OVERLAP_FRACTION) || (bdRate !== null && fraction.psnr < BD_MIN_OVERLAP_FRACTION);
  return { method, bdRate, bdPsnr, degree, overlap: { logRate: rateSpan, psnr: psnrSpan }, overlapFraction: fraction, shortOverlap };
}

/** A result as the API, the table and the command line state it: the shared rate interval in bits per pixel. */
export interface BdSummary {
  method: BdMethod;
  bdRate: number | null;
  bdPsnr: number | null;
  shared: { bpp: [number, number] | null; psnr: [number, number] | null };
  sharedFraction: { bpp: number; psnr: number };
  shortOverlap: boolean;
}

export function bdSummary(r: BdResult): BdSummary {
  const lr = r.overlap.logRate;
  return {
    method: r.method,
    bdRate: r.bdRate,
    bdPsnr: r.bdPsnr,
    shared: { bpp: lr ? [Math.exp(lr[0]), Math.exp(lr[1])] : null, psnr: r.overlap.psnr },
    sharedFraction: { bpp: r.overlapFraction.rate, psnr: r.overlapFraction.psnr },
    shortOverlap: r.shortOverlap,
  };
}

/** The summary of a comparison that could not be made (too few points, repeated rates): no figures, nothing shared. */
export function emptyBdSummary(method: BdMethod): BdSummary {
  return { method, bdRate: null, bdPsnr: null, shared: { bpp: null, psnr: null }, sharedFraction: { bpp: 0, psnr: 0 }, shortOverlap: false };
}

/** Why a computed result lacks a figure, or null when it has both. */
export function bdMissingReason(r: BdResult): string | null {
  if (r.bdRate === null && r.bdPsnr === null) return 'the curves share neither a rate nor a PSNR interval';
  if (r.bdRate === null) return 'the curves share no PSNR interval';
  if (r.bdPsnr === null) return 'the curves share no rate interval';
  return null;
}
