import sharp from 'sharp';
import { afterAll, describe, expect, it } from 'vitest';
import {
  decode, encode, encodePng, evaluate, imagesToTrainingVectors, meanSquaredError, shutdownEngineWorkers, trainCodebooks,
  type Codebook, type ColorMode, type PixelImage,
} from '../../../server/engine';
import { packBits, unpackBits } from '../../../server/engine/format/bit-packing';
import { meanLevel, quantizeMean } from '../../../server/engine/io/mean-removal';
import { readContainerHeader, HEADER_BYTES } from '../../../server/engine/format/container';

afterAll(() => shutdownEngineWorkers());

/** A smooth pattern with texture, odd sizes so every tiling pads the right and bottom edges. */
function pattern(width: number, height: number, color: ColorMode, phase: number): PixelImage {
  const channels = color === 'rgb' ? 3 : 1;
  const pixels = new Float32Array(width * height * channels);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      for (let c = 0; c < channels; c += 1) {
        const v = 128 + 90 * Math.sin((x + phase) / (5 + c)) * Math.cos((y - phase) / 7) + 30 * Math.sin(x * y * 0.013 + c);
        // Luma sources are unrounded in practice (BT.601 of 8-bit RGB); rgb sources are 8-bit integers.
        pixels[(y * width + x) * channels + c] = color === 'rgb' ? Math.round(Math.min(255, Math.max(0, v))) : Math.min(255, Math.max(0, v));
      }
    }
  }
  return { name: `pattern-${phase}.png`, width, height, color, channels, pixels };
}

async function trained(images: PixelImage[], meanBits: number | null, bits: number): Promise<Codebook> {
  const channels = images[0].channels;
  const preprocessing = meanBits === null ? ({ kind: 'none' } as const) : ({ kind: 'mean-removed', meanBits } as const);
  const patch = { width: 3, height: 2, channels, color: images[0].color };
  const { vectors, dimension } = imagesToTrainingVectors(images, { patch, stride: 1, preprocessing });
  const [book] = await trainCodebooks(vectors, dimension, { bits, init: 'kmeans++', seed: 3, patch, preprocessing, source: 'patterns' });
  return book;
}

describe.each([
  ['luma', null],
  ['luma', 4],
  ['rgb', null],
  ['rgb', 6],
] as const)('coding %s images (mean bits %s)', (color, meanBits) => {
  const images = [pattern(37, 23, color, 0), pattern(19, 30, color, 11)];

  it('decodes to exactly the pixels evaluation measured, including the cropped edges', async () => {
    const book = await trained(images, meanBits, 5);
    const report = await evaluate(book, images, { keepOutputs: true });
    for (const [i, image] of images.entries()) {
      const { container } = await encode(book, image);
      expect(Buffer.compare(container, report.images[i].container!)).toBe(0);
      const out = decode(book, container);
      expect(out).toMatchObject({ width: image.width, height: image.height, channels: image.channels });
      expect(out.pixels).toEqual(report.images[i].reconstruction);
      expect(meanSquaredError(image.pixels, out.pixels)).toBe(report.images[i].mse);
      // And the PNG we write holds those pixels: read back by sharp's own PNG decoder (libspng/libpng).
      const png = await encodePng(out.pixels, out.width, out.height, out.channels);
      expect((await sharp(png).metadata()).channels).toBe(out.channels);
      const reader = out.channels === 1 ? sharp(png).extractChannel(0) : sharp(png);
      const back = await reader.raw().toBuffer({ resolveWithObject: true });
      expect(new Uint8Array(back.data)).toEqual(out.pixels);
    }
    // Rate bookkeeping: container bytes give the actual rate; the header carries the stated geometry.
    const header = readContainerHeader(report.images[0].container!);
    expect(header).toMatchObject({ width: 37, height: 23, patchWidth: 3, patchHeight: 2, indexBits: 5, meanBits: meanBits ?? 0, color });
    expect(report.images[0].bppActual).toBeCloseTo((report.images[0].container!.length * 8) / (37 * 23), 12);
    expect(report.overall.bppFixed).toBeCloseTo((5 + (meanBits ?? 0)) / 6, 12);
  });
});

describe('mean-removed coding', () => {
  it('quantizes means with a midrise uniform quantizer on [0, 255] (worked examples)', () => {
    // m = 1: cells [0, 127.5) and [127.5, 255], levels 63.75 and 191.25.
    expect([quantizeMean(100, 1), meanLevel(0, 1)]).toEqual([0, 63.75]);
    expect([quantizeMean(200, 1), meanLevel(1, 1)]).toEqual([1, 191.25]);
    // m = 8: cell width 255/256; 255 falls in the top cell (255), whose centre is 254.5019…
    expect(quantizeMean(255, 8)).toBe(255);
    expect(meanLevel(255, 8)).toBeCloseTo(254.50195, 5);
    expect(quantizeMean(0, 8)).toBe(0);
  });

  it('codes a flat image with one codeword to within half a mean step', async () => {
    const flat: PixelImage = { name: 'flat', width: 12, height: 12, color: 'luma', channels: 1, pixels: new Float32Array(144).fill(77) };
    const patch = { width: 2, height: 2, channels: 1 as const, color: 'luma' as const };
    const preprocessing = { kind: 'mean-removed' as const, meanBits: 8 };
    const { vectors, dimension } = imagesToTrainingVectors([flat], { patch, preprocessing });
    const [book] = await trainCodebooks(vectors, dimension, { bits: 0, init: 'split', patch, preprocessing, source: 'flat' });
    const { reconstruction } = await encode(book, flat);
    // Worked by hand: 77 is in cell floor(77·256/255) = 77, level 77.5·255/256 ≈ 77.199; every residual is ≈ −0.199,
    // which the single centroid reproduces, so the decoder rounds 77.199 − 0.199 back to 77.
    expect(Array.from(new Set(reconstruction))).toEqual([77]);
  });
});

describe('bit packing', () => {
  it('packs most significant bit first and pads with zeros (worked example: 5, 3, 7 in 3 bits → 1010 1111, 1000 0000)', () => {
    const out = new Uint8Array(2);
    expect(packBits([5, 3, 7], 3, out)).toBe(2);
    expect(Array.from(out)).toEqual([0b10101111, 0b10000000]);
    const back = new Uint32Array(3);
    unpackBits(out, 0, 3, 3, back);
    expect(Array.from(back)).toEqual([5, 3, 7]);
  });

  it('round-trips 14-bit indices and packs nothing for 0 bits', () => {
    const values = Uint32Array.from({ length: 101 }, (_, i) => (i * 2654435761) % 16384);
    const out = new Uint8Array(Math.ceil((101 * 14) / 8));
    packBits(values, 14, out);
    const back = new Uint32Array(101);
    unpackBits(out, 0, 101, 14, back);
    expect(back).toEqual(values);
    expect(packBits([0, 0, 0], 0, new Uint8Array(0))).toBe(0);
  });
});

describe('container header', () => {
  it('is 68 bytes and starts with the magic CWVQ', async () => {
    const images = [pattern(16, 16, 'luma', 1)];
    const book = await trained(images, null, 2);
    const { container } = await encode(book, images[0]);
    expect(HEADER_BYTES).toBe(68);
    expect(container.subarray(0, 4).toString('latin1')).toBe('CWVQ');
    expect(container.readUInt32LE(64)).toBe(container.length - 68);
  });
});
