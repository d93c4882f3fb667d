// The codebook read as a density of its training patches (server/engine/model): mixture likelihood, posterior mean,
// false-alarm thresholds, the noise estimate, denoising and anomaly ranking, each checked against an outside reference
// named beside it.
import { readFileSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import {
  addNoise, anomalyModel, anomalyModelFromScores, anomalyScores, codebookMixture, codebookTrainingVectors, countAbove, denoise, evaluate, empiricalQuantile, estimateNoise,
  imagesToTrainingVectors, makeCodebook, meanSquaredError, patchEstimator, rankBlocks, restoreMixture, scoreVectors, shutdownEngineWorkers, trainCodebooks,
  type Codebook, type PixelImage, type PreprocessingInfo,
} from '../../server/engine';

afterAll(async () => {
  await shutdownEngineWorkers();
});

/** A codebook of raw vectors with the given codewords, usage and pooled training distortion (no patch geometry). */
function rawCodebook(codewords: number[][], usage: number[], distortion: number): Codebook {
  return makeCodebook({
    size: codewords.length,
    dimension: codewords[0].length,
    patch: null,
    preprocessing: { kind: 'none' },
    codewords: Float32Array.from(codewords.flat()),
    usage: Uint32Array.from(usage),
    training: { source: 'hand-made', vectorCount: usage.reduce((a, b) => a + b, 0), init: 'random', epsilon: 0, seed: 1, iterations: 0, distortion, trace: [] },
  });
}

const luma = (name: string, width: number, height: number, value: (x: number, y: number) => number): PixelImage => {
  const pixels = new Float32Array(width * height);
  for (let y = 0; y < height; y += 1) for (let x = 0; x < width; x += 1) pixels[y * width + x] = value(x, y);
  return { name, width, height, color: 'luma', channels: 1, pixels };
};

/** A smooth texture whose frequencies and phase vary with the seed, on integer 8-bit values. */
const texture = (seed: number, width = 96, height = 96) =>
  luma(`texture-${seed}`, width, height, (x, y) => {
    const a = 1 + ((seed * 0.37) % 3);
    const b = (seed * 1.3) % 7;
    return Math.round(128 + 50 * Math.sin((x + 3 * b) / (5 + a)) * Math.cos((y - b) / 8) + 20 * Math.sin((x + y + seed) / 3.1));
  });

async function trainOn(images: PixelImage[], bits: number, preprocessing: PreprocessingInfo = { kind: 'none' }): Promise<Codebook> {
  const patch = { width: 4, height: 4 };
  const { vectors, dimension } = imagesToTrainingVectors(images, { patch, stride: 1, preprocessing });
  const books = await trainCodebooks(vectors, dimension, { bits, init: 'kmeans++', seed: 5, patch: { ...patch, channels: 1, color: 'luma' }, preprocessing, source: 'textures', stride: 1 });
  return books[books.length - 1];
}

describe('the mixture of a codebook', () => {
  it('gives a single component the negative log-likelihood of the Gaussian in closed form', () => {
    // Closed form of the isotropic normal density: −log N(x; c, σ²I) = (d/2)·log(2πσ²) + ‖x − c‖² / (2σ²).
    const c = [10, -3, 7.5, 0, 2, 4];
    const sigma2 = 2.5;
    const mixture = codebookMixture(rawCodebook([c], [40], sigma2));
    const x = Float32Array.from([11, -1, 7, 3, 2, 0]);
    const dist = x.reduce((s, v, i) => s + (v - c[i]) ** 2, 0);
    const expected = (c.length / 2) * Math.log(2 * Math.PI * sigma2) + dist / (2 * sigma2);
    const scores = scoreVectors(mixture, x);
    expect(scores.nll[0]).toBeCloseTo(expected, 12);
    expect(scores.distance[0]).toBe(dist);
  });

  it('agrees with a direct float64 sum of weighted Gaussian densities on a small case', () => {
    // Definition of a Gaussian mixture density, p(x) = Σ_k π_k N(x; c_k, σ_k²I), summed directly (no log-sum-exp)
    // where nothing underflows; weights from usage 1, 2 and 5, the pooled variance 3 for every cell.
    const codewords = [[0, 0], [4, 1], [-2, 5]];
    const usage = [1, 2, 5];
    const mixture = codebookMixture(rawCodebook(codewords, usage, 3));
    const x = [1.5, 2];
    let p = 0;
    codewords.forEach((c, k) => {
      const dist = (x[0] - c[0]) ** 2 + (x[1] - c[1]) ** 2;
      p += (usage[k] / 8) * Math.exp(-dist / 6) / (2 * Math.PI * 3);
    });
    expect(scoreVectors(mixture, Float32Array.from(x)).nll[0]).toBeCloseTo(-Math.log(p), 12);
  });

  it('gives an unused cell half a count of weight and floors a cell of one vector at the pooled figure', () => {
    // The documented floors (server/engine/model/README.md): weight max(usage, ½), variance (D_k + d·σ̄²)/((n_k + 1)·d).
    const book = rawCodebook([[0, 0], [10, 10]], [3, 0], 1);
    const mixture = codebookMixture(book, { trainingVectors: Float32Array.from([0, 0, 1, 1, 10, 10]) });
    expect(Array.from(mixture.weights)).toEqual([3 / 3.5, 0.5 / 3.5]);
    const pooled = 2 / 6; // squared errors 0, 2 and 0 over 3 vectors × 2 components
    expect(mixture.pooledVariance).toBeCloseTo(pooled, 15);
    expect(mixture.variances[0]).toBeCloseTo((2 + 2 * pooled) / (3 * 2), 15);
    expect(mixture.variances[1]).toBeCloseTo((0 + 2 * pooled) / (2 * 2), 15);
  });
});

describe('the posterior mean', () => {
  it('matches a hand computation for a two-component 1-D mixture', () => {
    // Bayes' rule over the components with the noise variance added, and the Gaussian conditional mean within each.
    // Components π = (¼, ¾), c = (0, 4), σ_k² = 1; noise σ² = 1, so each is N(c_k, 2) for y = 1:
    //   w_1/w_2 = (¼·e^(−1/4)) / (¾·e^(−9/4)) = e²/3, so w_2 = 3/(e² + 3);
    //   E[x | y, k] = c_k + ½(y − c_k) = 0.5 and 2.5, so x̂ = 0.5 + 2·w_2 = 0.5 + 6/(e² + 3) = 0.5 + 6/10.389056 = 1.0775308…
    const mixture = codebookMixture(rawCodebook([[0], [4]], [1, 3], 1));
    const out = new Float64Array(1);
    patchEstimator(mixture, 1, 'mean')(Float64Array.from([1]), out);
    expect(out[0]).toBeCloseTo(0.5 + 6 / (Math.E ** 2 + 3), 12);
    expect(out[0]).toBeCloseTo(1.0775308, 7);
    patchEstimator(mixture, 1, 'hard')(Float64Array.from([1]), out);
    expect(out[0]).toBe(0);
  });
});

describe('the false-alarm threshold', () => {
  it('interpolates order statistics as Hyndman & Fan definition 7', () => {
    // Hyndman & Fan (1996), definition 7 (NumPy's percentile default): for 1, 2, 3, 4 at p = 0.4, h = 1.2 → 2.2.
    expect(empiricalQuantile([4, 1, 3, 2], 0.4)).toBeCloseTo(2.2, 15);
    expect(empiricalQuantile([4, 1, 3, 2], 0.5)).toBe(2.5);
  });

  it('flags the stated fraction of the training blocks, within one block', async () => {
    const train = [1, 2, 3].map((s) => texture(s, 64, 64));
    const book = await trainOn(train, 4);
    const vectors = codebookTrainingVectors(book, train);
    const n = vectors.length / 16;
    for (const rate of [0.01, 0.003]) {
      const model = anomalyModel(book, vectors, { rate });
      expect(model.calibration.trainingVectors).toBe(n);
      const flagged = countAbove(scoreVectors(model.mixture, vectors).nll, model.calibration.thresholds.nll);
      expect(model.calibration.flaggedTraining.nll).toBe(flagged);
      expect(Math.abs(flagged - rate * n)).toBeLessThanOrEqual(1);
    }
  });

  it('sets the same thresholds from kept training scores and a restored mixture as from the training vectors', async () => {
    const train = [1, 2].map((s) => texture(s, 48, 48));
    const book = await trainOn(train, 4);
    const vectors = codebookTrainingVectors(book, train);
    const fresh = anomalyModel(book, vectors, { rate: 0.02 });
    const mixture = restoreMixture(book, codebookMixture(book, { trainingVectors: vectors }));
    const kept = anomalyModelFromScores(mixture, scoreVectors(mixture, vectors), { rate: 0.02 });
    expect(kept.calibration).toEqual(fresh.calibration);
    expect(Array.from(kept.mixture.variances)).toEqual(Array.from(fresh.mixture.variances));
    expect(() => restoreMixture(book, { variances: [1], varianceSource: 'stored-distortion', pooledVariance: 1 })).toThrow(/expected 16 values/);
  });

  it('flags fresh patches of the training distribution within a factor of 2 of the requested rate', async () => {
    // Measured: 69 192 training patches, rate 0.01 → 0.0106 of 69 192 fresh ones (textures of other seeds).
    const train = [1, 2, 3, 4, 5, 6, 7, 8].map((s) => texture(s));
    const fresh = [11, 12, 13, 14, 15, 16, 17, 18].map((s) => texture(s));
    const book = await trainOn(train, 5);
    const model = anomalyModel(book, codebookTrainingVectors(book, train), { rate: 0.01 });
    const freshVectors = imagesToTrainingVectors(fresh, { patch: { width: 4, height: 4 }, stride: 1 }).vectors;
    const measured = countAbove(scoreVectors(model.mixture, freshVectors).nll, model.calibration.thresholds.nll) / (freshVectors.length / 16);
    expect(measured).toBeGreaterThan(0.005);
    expect(measured).toBeLessThan(0.02);
  });
});

describe('the noise estimate', () => {
  it('recovers a known σ from seeded noise on a flat image within 5 %', () => {
    // Donoho & Johnstone (1994): median |finest diagonal coefficient| / 0.6745 estimates σ of Gaussian noise.
    // 4096 coefficients; over seeds 1–20 the estimate of σ = 20 ranged 19.27–20.76.
    const flat = luma('flat', 128, 128, () => 128);
    for (const seed of [1, 2, 3, 4, 5]) expect(Math.abs(estimateNoise(addNoise(flat, 20, seed)) - 20)).toBeLessThan(1);
    expect(estimateNoise(flat)).toBe(0);
  });
});

describe('denoising', () => {
  // The 24×18 grey image of tests/fixtures/ssim-24x18.json (the ssim.js package's test image), and a codebook of 16
  // codewords trained on its own 4×4 patches at stride 1: the test image is the training distribution here.
  const fixture = JSON.parse(readFileSync(new URL('../fixtures/ssim-24x18.json', import.meta.url), 'utf8')) as { original: number[][] };
  const clean = luma('ssim-fixture', 24, 18, (x, y) => fixture.original[y][x]);

  it('lowers the error of σ = 20 noise, and the posterior mean does better than the hard choice on average', async () => {
    // The posterior mean is the MMSE estimate under the model only; on an image the model fits approximately, so this
    // asserts what was measured with a wide margin (seeds 1–5, MSE against the clean image): noisy 351–433,
    // hard 283–304, mean 186–218. The theory alone guarantees neither inequality on one image.
    const book = await trainOn([clean], 4);
    const mixture = codebookMixture(book, { trainingVectors: codebookTrainingVectors(book, [clean]) });
    let hardTotal = 0;
    let meanTotal = 0;
    for (const seed of [1, 2, 3, 4, 5]) {
      const noisy = addNoise(clean, 20, seed);
      const noisyMse = meanSquaredError(clean.pixels, noisy.pixels);
      const hard = meanSquaredError(clean.pixels, denoise(book, mixture, noisy, { sigma: 20, estimator: 'hard' }).pixels);
      const mean = meanSquaredError(clean.pixels, denoise(book, mixture, noisy, { sigma: 20, estimator: 'mean' }).pixels);
      expect(mean).toBeLessThan(0.75 * noisyMse);
      hardTotal += hard;
      meanTotal += mean;
    }
    expect(meanTotal).toBeLessThan(0.85 * hardTotal);
  });

  it('keeps each patch\'s own mean with a mean-removed codebook', async () => {
    // The documented rule (server/engine/model/README.md): the estimate is the patch's exact mean plus a zero-mean
    // residual. With the step equal to the patch side every pixel has one estimate, so each block of the output has
    // its noisy block's mean, up to the rounding of its 16 pixels to 8-bit values (at most ½ each).
    const book = await trainOn([clean], 3, { kind: 'mean-removed', meanBits: 3 });
    const mixture = codebookMixture(book);
    const noisy = addNoise(luma('gradient', 24, 16, (x, y) => 60 + 4 * x + 3 * y), 10, 3);
    for (const estimator of ['hard', 'mean'] as const) {
      const out = denoise(book, mixture, noisy, { sigma: 10, estimator, step: 4 }).pixels;
      for (let by = 0; by < 4; by += 1) {
        for (let bx = 0; bx < 6; bx += 1) {
          let before = 0;
          let after = 0;
          for (let y = 4 * by; y < 4 * by + 4; y += 1) for (let x = 4 * bx; x < 4 * bx + 4; x += 1) {
            before += noisy.pixels[y * 24 + x] / 16;
            after += out[y * 24 + x] / 16;
          }
          expect(Math.abs(after - before), `${estimator} block ${bx},${by}`).toBeLessThanOrEqual(0.5);
        }
      }
    }
  });

  it('gives back the image itself as σ tends to 0, with and without mean removal', async () => {
    // As σ → 0 the posterior mean's gain σ_k²/(σ_k² + σ²) tends to 1, so every patch estimate tends to the patch.
    for (const preprocessing of [{ kind: 'none' }, { kind: 'mean-removed', meanBits: 6 }] as const) {
      const book = await trainOn([clean], 4, preprocessing);
      const mixture = codebookMixture(book);
      expect(Array.from(denoise(book, mixture, clean, { sigma: 0, estimator: 'mean' }).pixels)).toEqual(Array.from(clean.pixels));
      const nearly = denoise(book, mixture, clean, { sigma: 0.5, estimator: 'mean' }).pixels;
      expect(meanSquaredError(clean.pixels, nearly)).toBeLessThan(0.5);
    }
  });
});

describe('anomaly scores', () => {
  it('ranks a bright square pasted into a smooth texture first, and at least 0.8 of its blocks among the top', async () => {
    const train = [1, 2, 3, 4].map((s) => texture(s, 64, 64));
    const book = await trainOn(train, 5);
    const model = anomalyModel(book, codebookTrainingVectors(book, train), { rate: 0.001 });
    // A held-out texture with a 12×12 square of value 250 at (20, 16): 9 of its 4×4 blocks lie wholly inside it.
    const base = texture(9, 48, 48);
    const inSquare = (x: number, y: number) => x >= 20 && x < 32 && y >= 16 && y < 28;
    const held = luma('held', 48, 48, (x, y) => (inSquare(x, y) ? 250 : base.pixels[y * 48 + x]));
    const result = anomalyScores(book, model, held);
    const ranked = rankBlocks([result], 'nll', 9);
    expect(inSquare(ranked[0].x, ranked[0].y)).toBe(true);
    expect(ranked.filter((b) => inSquare(b.x, b.y)).length).toBeGreaterThanOrEqual(0.8 * 9);
    const flagged = result.blocks.filter((b) => b.flagged);
    // Precision and recall at rate 0.001: every flagged block is in the square and every square block is flagged.
    expect(flagged.every((b) => inSquare(b.x, b.y))).toBe(true);
    expect(flagged).toHaveLength(9);
  });

  it('scores a mean-removed block and the same block one mean step brighter alike', async () => {
    // The codebook sees the residual after the quantized mean (server/engine/io/mean-removal.ts): adding exactly one
    // quantizer step, 255/2^m, moves the mean code by one and leaves the residual unchanged.
    const train = [1, 2].map((s) => texture(s, 48, 48));
    const book = await trainOn(train, 4, { kind: 'mean-removed', meanBits: 4 });
    const model = anomalyModel(book, codebookTrainingVectors(book, train), { rate: 0.01 });
    const step = 255 / 16;
    const base = luma('base', 8, 8, (x, y) => 80 + 5 * x + 3 * y);
    const brighter = luma('brighter', 8, 8, (x, y) => 80 + step + 5 * x + 3 * y);
    const a = anomalyScores(book, model, base).blocks;
    const b = anomalyScores(book, model, brighter).blocks;
    expect(b.map((s) => s.nll)).toEqual(a.map((s) => s.nll));
    expect(b.map((s) => s.distance)).toEqual(a.map((s) => s.distance));
  });
});

describe('variances from stored per-cell distortion', () => {
  it('equal those measured on the training vectors when the distortion is what training measured', async () => {
    // The same formula over the same counts and squared errors (server/engine/model/README.md); the usage and the
    // per-cell squared errors are measured here with the engine's own evaluation of the training vectors.
    const train = [1, 2].map((s) => texture(s, 48, 48));
    const book = await trainOn(train, 4);
    const vectors = codebookTrainingVectors(book, train);
    const measured = await evaluate(book, { vectors, dimension: 16 });
    const stored = codebookMixture({ ...book, usage: measured.usage }, { cellDistortion: measured.cellDistortion });
    const fromVectors = codebookMixture(book, { trainingVectors: vectors });
    expect(stored.varianceSource).toBe('cell-distortion');
    for (let k = 0; k < book.size; k += 1) expect(stored.variances[k]).toBeCloseTo(fromVectors.variances[k], 9);
    expect(() => codebookMixture(book, { cellDistortion: [1, 2] })).toThrow(/expected 16 values/);
  });
});
