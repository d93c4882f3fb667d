import { afterAll, describe, expect, it } from 'vitest';
import { createRng, shutdownEngineWorkers, train } from '../../server/engine/training/index';

// A K-level quantizer of U(0,1) with equal cells of width 1/K has MSE 1/(12K²) and is the
// Lloyd optimum for this source (common practice; textbook result, e.g. Gersho & Gray,
// "Vector Quantization and Signal Compression", 1992, ch. 5 and 6).
const SAMPLES = 400_000;

afterAll(() => shutdownEngineWorkers());

describe('uniform source', () => {
  const rng = createRng(99);
  const samples = new Float32Array(SAMPLES);
  for (let i = 0; i < SAMPLES; i++) samples[i] = rng.next();

  for (const k of [2, 4, 8, 16]) {
    it(`reaches MSE 1/(12K²) within 1 % with K = ${k}`, async () => {
      const result = await train(samples, 1, { k, init: 'split', epsilon: 1e-12, maxIterations: 4000 });
      const book = result.codebooks[result.codebooks.length - 1];
      const expected = 1 / (12 * k * k);
      expect(Math.abs(book.distortion - expected) / expected).toBeLessThan(0.01);
      // Optimal levels are the cell midpoints (2i + 1)/(2K) (same source).
      const sorted = Array.from(book.codewords).sort((a, b) => a - b);
      for (let i = 0; i < k; i++) expect(Math.abs(sorted[i] - (2 * i + 1) / (2 * k))).toBeLessThan(0.1 / k);
    });
  }
});
