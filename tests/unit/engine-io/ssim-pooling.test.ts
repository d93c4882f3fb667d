import { afterAll, describe, expect, it } from 'vitest';
import { evaluate, imagesToTrainingVectors, poolSsim, shutdownEngineWorkers, trainCodebooks, type PixelImage } from '../../../server/engine';

afterAll(() => shutdownEngineWorkers());

function noise(width: number, height: number, seed: number): PixelImage {
  const pixels = new Float32Array(width * height);
  let s = seed;
  for (let i = 0; i < pixels.length; i += 1) {
    // Park–Miller minimal standard generator (Park & Miller, CACM 31(10), 1988): 16807·s mod (2^31 − 1).
    s = (s * 16807) % 2147483647;
    pixels[i] = s % 256;
  }
  return { name: `noise-${seed}`, width, height, color: 'luma', channels: 1, pixels };
}

describe('pooling SSIM over a set of images', () => {
  it('weights each image by its pixels and leaves out images too small for the window', () => {
    // Hand-computed: (0.9 × 100 + 0.5 × 300) / (100 + 300) = 240 / 400 = 0.6; a plain mean would give 0.7.
    expect(poolSsim([{ ssim: 0.9, pixels: 100 }, { ssim: 0.5, pixels: 300 }, { ssim: null, pixels: 50 }])).toBeCloseTo(0.6, 12);
    expect(poolSsim([{ ssim: null, pixels: 64 }])).toBeNull();
    expect(poolSsim([])).toBeNull();
  });

  it('is the rule evaluate() pools its images by, which the command line and the studio both report', async () => {
    const images = [noise(64, 48, 7), noise(24, 24, 8)];
    const patch = { width: 2, height: 2, channels: 1 as const, color: 'luma' as const };
    const { vectors, dimension } = imagesToTrainingVectors(images, { patch, seed: 3 });
    const [book] = await trainCodebooks(vectors, dimension, { bits: 3, init: 'kmeans++', patch, preprocessing: { kind: 'none' }, source: 'noise', seed: 3 });
    const result = await evaluate(book, images);
    const [a, b] = result.images;
    expect(a.ssim).not.toBeNull();
    expect(b.ssim).not.toBeNull();
    const weighted = (a.ssim! * 64 * 48 + b.ssim! * 24 * 24) / (64 * 48 + 24 * 24);
    expect(result.overall.ssim).toBeCloseTo(weighted, 12);
    // The two images score differently, so the plain mean the command line used to report would disagree.
    expect(Math.abs(result.overall.ssim! - (a.ssim! + b.ssim!) / 2)).toBeGreaterThan(1e-6);
  });
});
