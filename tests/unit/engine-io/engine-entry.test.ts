import { afterAll, describe, expect, it } from 'vitest';
import {
  baselines, evaluate, imagesToTrainingVectors, makeCodebook, shutdownEngineWorkers, trainCodebooks, type PixelImage,
} from '../../../server/engine';

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

const patch = { width: 2, height: 2, channels: 1 as const, color: 'luma' as const };
const training = { source: 't', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: 1, iterations: 0, distortion: 0, trace: [] };

describe('engine entry validation', () => {
  it('draws the same training sample for the same seed and a different one for another seed', () => {
    const images = [noise(40, 30, 1), noise(20, 20, 2)];
    const a = imagesToTrainingVectors(images, { patch, sample: 50, seed: 9 });
    const b = imagesToTrainingVectors(images, { patch, sample: 50, seed: 9 });
    const c = imagesToTrainingVectors(images, { patch, sample: 50, seed: 10 });
    expect(a.vectors).toEqual(b.vectors);
    expect(a.vectors).not.toEqual(c.vectors);
    // Areas 1200 and 400 split 50 vectors 37.5 : 12.5 → largest remainder, ties to the first image: 38 and 12.
    expect(a.perImage).toEqual([38, 12]);
  });

  it('rejects bad options with a typed error naming the field', async () => {
    const images = [noise(8, 8, 3)];
    expect(() => imagesToTrainingVectors(images, { patch: { width: 1, height: 2 } })).toThrow(/patch\.width/);
    const { vectors, dimension } = imagesToTrainingVectors(images, { patch });
    await expect(trainCodebooks(vectors, dimension, { bits: 15, init: 'split', patch, preprocessing: { kind: 'none' }, source: 's' })).rejects.toMatchObject({
      name: 'EngineInputError',
      field: 'bits',
    });
    await expect(trainCodebooks(vectors, 9, { bits: 1, init: 'split', patch, preprocessing: { kind: 'none' }, source: 's' })).rejects.toThrow(/2×2 luma patch has 4/);
    const book = makeCodebook({ size: 1, dimension: 4, patch, preprocessing: { kind: 'none' }, codewords: new Float32Array(4), usage: new Uint32Array(1), training });
    await expect(evaluate(book, images, { threads: 0 })).rejects.toThrow(/evaluate: threads/);
    await expect(evaluate(book, { vectors: new Float32Array(9), dimension: 3 })).rejects.toThrow(/vectors have 3 components, codebook has 4/);
    await expect(baselines(images, { codecs: ['gif' as never] })).rejects.toThrow(/baselines: codecs\[0\]/);
  });

  it('refuses to code images with a codebook of the other colour mode', async () => {
    const rgbBook = makeCodebook({
      size: 1, dimension: 12, patch: { width: 2, height: 2, channels: 3, color: 'rgb' }, preprocessing: { kind: 'none' },
      codewords: new Float32Array(12), usage: new Uint32Array(1), training,
    });
    await expect(evaluate(rgbBook, [noise(8, 8, 4)])).rejects.toThrow(/codebook expects rgb images, got luma/);
  });
});
