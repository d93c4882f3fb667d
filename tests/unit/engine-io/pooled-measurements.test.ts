import { createHash } from 'node:crypto';
import { afterAll, describe, expect, it } from 'vitest';
import {
  evaluate,
  imagesToTrainingVectors,
  measureImage,
  poolImageMeasurements,
  shutdownEngineWorkers,
  trainCodebooks,
  type PixelImage,
} from '../../../server/engine';
import { fromWire, toWire } from '../../../server/jobs/compute/tasks';

afterAll(() => shutdownEngineWorkers());

function noise(width: number, height: number, seed: number): PixelImage {
  const pixels = new Float32Array(width * height);
  let s = seed;
  for (let i = 0; i < pixels.length; i += 1) {
    // Park–Miller minimal standard generator (Park & Miller, CACM 31(10), 1988): 16807·s mod (2^31 − 1).
    s = (s * 16807) % 2147483647;
    pixels[i] = (s % 256) >> (i % 3);
  }
  return { name: `noise-${seed}`, width, height, color: 'luma', channels: 1, pixels };
}

const digest = (a: ArrayBufferView) => createHash('sha256').update(new Uint8Array(a.buffer, a.byteOffset, a.byteLength)).digest('hex');

describe('measuring images apart and pooling them', () => {
  it('gives the same bits as evaluating the set at once, whichever order the images were measured in and after a trip through the task wire', async () => {
    const images = [noise(64, 48, 7), noise(24, 24, 8), noise(40, 40, 9), noise(16, 8, 10)];
    const patch = { width: 4, height: 4, channels: 1 as const, color: 'luma' as const };
    const { vectors, dimension } = imagesToTrainingVectors(images, { patch, seed: 5 });
    const [book] = await trainCodebooks(vectors, dimension, { bits: 4, init: 'kmeans++', patch, preprocessing: { kind: 'mean-removed', meanBits: 3 }, source: 'noise', seed: 5 });
    const whole = await evaluate(book, images);

    // As workers would: each image measured separately, in reverse order, each result serialised and parsed back.
    const measured = new Array(images.length);
    for (const i of [3, 1, 2, 0]) measured[i] = fromWire(toWire(await measureImage(book, images[i])));
    const pooled = poolImageMeasurements(book, measured);

    expect(pooled.overall).toEqual(whole.overall);
    expect(pooled.images.map((r) => [r.mse, r.psnr, r.ssim, r.bytes, r.bppEntropy])).toEqual(whole.images.map((r) => [r.mse, r.psnr, r.ssim, r.bytes, r.bppEntropy]));
    expect(digest(pooled.usage)).toBe(digest(whole.usage));
    expect(digest(pooled.cellDistortion)).toBe(digest(whole.cellDistortion));
  });

  it('keeps an exact reconstruction\u2019s infinite PSNR across the wire, where plain JSON would turn it into null', () => {
    expect(fromWire<{ psnr: number }>(toWire({ psnr: Infinity })).psnr).toBe(Infinity);
    expect(JSON.parse(JSON.stringify({ psnr: Infinity })).psnr).toBeNull();
  });
});
