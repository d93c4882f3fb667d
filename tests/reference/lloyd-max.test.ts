import { afterAll, describe, expect, it } from 'vitest';
import { createRng, shutdownEngineWorkers, train } from '../../server/engine/training/index';

// Optimal (minimum mean-squared-error) scalar quantizers of a unit-variance Gaussian,
// from J. Max, "Quantizing for minimum distortion", IRE Transactions on Information
// Theory IT-6 (1960), Table I: output levels (positive half; the quantizer is symmetric)
// and the minimum mean squared error.
const MAX_1960 = [
  { levels: 2, outputs: [0.7979], mse: 0.3634 },
  { levels: 4, outputs: [0.4528, 1.51], mse: 0.1175 },
  { levels: 8, outputs: [0.2451, 0.756, 1.344, 2.152], mse: 0.03455 },
];

const SAMPLES = 400_000;

function gaussianSamples(seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(SAMPLES);
  for (let i = 0; i < SAMPLES; i++) out[i] = rng.normal();
  return out;
}

afterAll(() => shutdownEngineWorkers());

describe('Lloyd–Max quantizers of a unit Gaussian (Max 1960, Table I)', () => {
  const samples = gaussianSamples(2024);

  for (const { levels, outputs, mse } of MAX_1960) {
    for (const init of ['split', 'kmeans++'] as const) {
      it(`reaches the published ${levels}-level levels and MSE from ${init}`, async () => {
        const result = await train(samples, 1, { k: levels, init, epsilon: 1e-12, maxIterations: 3000, seed: 5 });
        const book = result.codebooks[result.codebooks.length - 1];
        expect(book.size).toBe(levels);
        const sorted = Array.from(book.codewords).sort((a, b) => a - b);
        const expected = [...outputs.map((v) => -v).reverse(), ...outputs];
        // Max 1960, Table I output levels, within 0.01.
        for (let i = 0; i < levels; i++) expect(Math.abs(sorted[i] - expected[i])).toBeLessThan(0.01);
        // Max 1960, Table I minimum MSE, within 1 %.
        expect(Math.abs(book.distortion - mse) / mse).toBeLessThan(0.01);
      });
    }
  }
});
