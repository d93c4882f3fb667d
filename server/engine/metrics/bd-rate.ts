/**
 * Bjøntegaard delta metrics between two rate–distortion curves (G. Bjøntegaard, "Calculation of
 * average PSNR differences between RD-curves", ITU-T VCEG-M33, 2001):
 *  - BD-PSNR: fit PSNR as a cubic in log rate for each curve, integrate both over the overlapping
 *    log-rate interval, and average the difference (test − reference), in dB.
 *  - BD-rate: fit log rate as a cubic in PSNR, integrate over the overlapping PSNR interval, average
 *    the difference, and report (e^Δ − 1) · 100 %, negative when the test curve needs fewer bits.
 * The original uses exactly four points per curve; with more points we fit the cubic by least squares
 * (common practice), with three the fit is exact at degree 2 (flagged through `degree`).
 */
export interface RdPoint {
  rate: number; // bits per pixel, > 0
  psnr: number; // dB, finite
}

export interface BdResult {
  bdRate: number | null; // percent; null when the curves share no PSNR interval
  bdPsnr: number | null; // dB; null when the curves share no rate interval
  degree: number; // polynomial degree used (3 unless a curve has fewer than 4 usable points)
  overlap: { logRate: [number, number] | null; psnr: [number, number] | null };
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

/** BD-rate and BD-PSNR of `test` against `reference`. */
export function bjontegaard(reference: readonly RdPoint[], test: readonly RdPoint[]): BdResult {
  const r = usable(reference);
  const t = usable(test);
  if (r.length < 3 || t.length < 3) {
    throw new BdRateError('each curve needs at least 3 points with a positive rate and a finite PSNR');
  }
  const degree = Math.min(3, r.length - 1, t.length - 1);
  const lr = r.map((p) => Math.log(p.rate));
  const lt = t.map((p) => Math.log(p.rate));
  const dr = r.map((p) => p.psnr);
  const dt = t.map((p) => p.psnr);

  const rateSpan = overlap(lr, lt);
  let bdPsnr: number | null = null;
  if (rateSpan) {
    const pr = polyfit(lr, dr, degree);
    const pt = polyfit(lt, dt, degree);
    const [lo, hi] = rateSpan;
    bdPsnr = (integratePolynomial(pt, lo, hi) - integratePolynomial(pr, lo, hi)) / (hi - lo);
  }

  const psnrSpan = overlap(dr, dt);
  let bdRate: number | null = null;
  if (psnrSpan) {
    const qr = polyfit(dr, lr, degree);
    const qt = polyfit(dt, lt, degree);
    const [lo, hi] = psnrSpan;
    const meanLogDiff = (integratePolynomial(qt, lo, hi) - integratePolynomial(qr, lo, hi)) / (hi - lo);
    bdRate = (Math.exp(meanLogDiff) - 1) * 100;
  }
  return { bdRate, bdPsnr, degree, overlap: { logRate: rateSpan, psnr: psnrSpan } };
}
