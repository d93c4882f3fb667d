import { afterAll, describe, expect, it } from 'vitest';
import {
  createRng, shutdownEngineWorkers, threadBudget, train, type TrainResult,
} from '../../server/engine/training/index';

// Invariants of the generalized Lloyd algorithm and LBG splitting (Linde, Buzo & Gray,
// "An algorithm for vector quantizer design", IEEE Trans. Communications COM-28, 1980):
// each centroid update and each re-partition can only lower the distortion, and a
// larger codebook grown by splitting never does worse than the one it came from.
// Codewords are stored in float32, so a converged run may wobble by float32 rounding of
// the centroids; the slack below (1e-9 relative) is far under one Lloyd step's gain.
const SLACK = 1e-9;

afterAll(() => shutdownEngineWorkers());

/** A correlated Gaussian source (AR(1) rows, ρ = 0.9), a common stand-in for image patches. */
function correlatedSource(n: number, d: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * d);
  for (let v = 0; v < n; v++) {
    let prev = rng.normal();
    out[v * d] = prev;
    for (let i = 1; i < d; i++) {
      prev = 0.9 * prev + Math.sqrt(1 - 0.81) * rng.normal();
      out[v * d + i] = prev;
    }
  }
  return out;
}

describe('LBG invariants', () => {
  const d = 8;
  const vectors = correlatedSource(20_000, d, 42);

  it('never raises the distortion from one iteration or codebook size to the next', async () => {
    const result = await train(vectors, d, { k: 64, init: 'split', epsilon: 1e-5, seed: 7 });
    expect(result.codebooks.map((b) => b.size)).toEqual([1, 2, 4, 8, 16, 32, 64]);
    let previousSize = Infinity;
    for (const book of result.codebooks) {
      for (let t = 1; t < book.trace.length; t++) {
        expect(book.trace[t].distortion).toBeLessThanOrEqual(book.trace[t - 1].distortion * (1 + SLACK));
      }
      expect(book.distortion).toBeLessThanOrEqual(previousSize * (1 + SLACK));
      previousSize = book.distortion;
      // The reported distortion is the mean of the per-cell errors.
      const total = book.cellDistortion.reduce((s, x) => s + x, 0);
      expect(Math.abs(total / (vectors.length) - book.distortion)).toBeLessThanOrEqual(1e-12 * book.distortion);
      expect(book.usage.reduce((s, x) => s + x, 0)).toBe(vectors.length / d);
    }
  });

  it('stays above the Shannon lower bound of a Gaussian source and below its variance', async () => {
    // Shannon lower bound for a Gaussian vector source: D(R) ≥ (∏ λ_i)^(1/d) · 2^(−2R)
    // per component (Gersho & Gray 1992, ch. 9/10; common practice). With 64 codewords in
    // 8 dimensions R = 0.75 bit per component, so no quantizer can beat the bound.
    const result = await train(vectors, d, { k: 64, init: 'split', epsilon: 1e-5 });
    const lambdas = ar1Eigenvalues(d, 0.9);
    const geoMean = Math.exp(lambdas.reduce((s, l) => s + Math.log(l), 0) / d);
    const bound = geoMean * 2 ** (-2 * (Math.log2(64) / d));
    const final = result.codebooks[result.codebooks.length - 1].distortion;
    expect(final).toBeGreaterThan(bound);
    expect(final).toBeLessThan(1); // better than no coding at all (unit variance)
  });

  it('counts the empty cells it re-seeds and leaves none empty', async () => {
    // Three copies of one codeword and one far away: the copies after the first and the
    // far codeword hold no vector at the start, so the first update re-seeds three cells.
    const start = new Float32Array(5 * d);
    for (let i = 0; i < d; i++) {
      start[i] = 0.5;
      start[d + i] = -0.5;
      start[2 * d + i] = -0.5;
      start[3 * d + i] = -0.5;
      start[4 * d + i] = 1e6;
    }
    const result = await train(vectors, d, { k: 5, init: 'random', initialCodewords: start, maxIterations: 30 });
    const book = result.codebooks[0];
    expect(book.trace[0].emptyRepaired).toBe(0);
    expect(book.trace[1].emptyRepaired).toBe(3);
    for (const u of book.usage) expect(u).toBeGreaterThan(0);
    expect(book.distortion).toBeLessThan(book.trace[0].distortion);
  });

  for (const init of ['split', 'kmeans++', 'random'] as const) {
    it(`gives bit-identical codewords for one seed with one thread and with all (${init})`, async () => {
      const all = threadBudget.total;
      const runs: TrainResult[] = [];
      for (const threads of [1, all, 1]) {
        runs.push(await train(vectors, d, { k: 48, init, seed: 9, threads, maxIterations: 15 }));
      }
      const bits = (r: TrainResult) =>
        r.codebooks.map((b) => Array.from(new Uint32Array(b.codewords.buffer, b.codewords.byteOffset, b.codewords.length)));
      expect(bits(runs[1])).toEqual(bits(runs[0]));
      expect(bits(runs[2])).toEqual(bits(runs[0]));
      expect(runs[1].codebooks.map((b) => b.distortion)).toEqual(runs[0].codebooks.map((b) => b.distortion));
    });
  }
});

/** Eigenvalues of the d × d AR(1) covariance ρ^|i−j| by Jacobi rotation (small d). */
function ar1Eigenvalues(d: number, rho: number): number[] {
  const a = Array.from({ length: d }, (_, i) => Array.from({ length: d }, (_, j) => rho ** Math.abs(i - j)));
  for (let sweep = 0; sweep < 100; sweep++) {
    let off = 0;
    for (let p = 0; p < d; p++) for (let q = p + 1; q < d; q++) off += a[p][q] ** 2;
    if (off < 1e-24) break;
    for (let p = 0; p < d; p++) {
      for (let q = p + 1; q < d; q++) {
        if (Math.abs(a[p][q]) < 1e-300) continue;
        const theta = (a[q][q] - a[p][p]) / (2 * a[p][q]);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let r = 0; r < d; r++) {
          const arp = a[r][p];
          const arq = a[r][q];
          a[r][p] = c * arp - s * arq;
          a[r][q] = s * arp + c * arq;
        }
        for (let r = 0; r < d; r++) {
          const apr = a[p][r];
          const aqr = a[q][r];
          a[p][r] = c * apr - s * aqr;
          a[q][r] = s * apr + c * aqr;
        }
      }
    }
  }
  return a.map((row, i) => row[i]);
}
