// PSNR against bit-error rate: the damaged-payload decoder, the closed-form expected distortion of fixed-length indices
// on a binary symmetric channel (Farvardin 1990; Zeger & Gersho 1990), and the simulation against it.
import { afterAll, describe, expect, it } from 'vitest';
import {
  channelCurve, concealIndex, createRng, decode, decodeDamaged, encode, flipBits, HEADER_BYTES, indexBits, reconstruct, shutdownEngineWorkers,
  type Codebook, type PixelImage,
} from '../../../server/engine';
import { madeUpCodebook, madeUpImage } from './fixtures';

afterAll(async () => {
  await shutdownEngineWorkers();
});

/**
 * The expected squared error of an image straight from the definition, written independently of the engine's
 * formula: for every block, every possible received word j of b bits with probability p^h (1−p)^(b−h) (h the Hamming
 * distance to the sent index), the block decoded with codeword c(j) and its error over the visible pixels.
 */
function expectedByDefinition(codebook: Codebook, image: PixelImage, indices: Uint32Array, p: number): number {
  const patch = codebook.patch!;
  const b = indexBits(codebook.size);
  const blocksX = Math.ceil(image.width / patch.width);
  const ch = image.channels;
  let total = 0;
  for (let by = 0; by * patch.height < image.height; by += 1) {
    for (let bx = 0; bx < blocksX; bx += 1) {
      const sent = indices[by * blocksX + bx];
      for (let j = 0; j < 2 ** b; j += 1) {
        let h = 0;
        for (let x = sent ^ j; x; x >>= 1) h += x & 1;
        const prob = p ** h * (1 - p) ** (b - h);
        const cw = concealIndex(j, codebook.size);
        let se = 0;
        for (let row = 0; row < patch.height && by * patch.height + row < image.height; row += 1) {
          for (let col = 0; col < patch.width && bx * patch.width + col < image.width; col += 1) {
            for (let c = 0; c < ch; c += 1) {
              const v = codebook.codewords[cw * codebook.dimension + (row * patch.width + col) * ch + c];
              const r = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
              se += (image.pixels[((by * patch.height + row) * image.width + bx * patch.width + col) * ch + c] - r) ** 2;
            }
          }
        }
        total += prob * se;
      }
    }
  }
  return total;
}

describe('decodeDamaged', () => {
  it('decodes an undamaged raw container as the strict decoder does, with and without markers', async () => {
    const book = madeUpCodebook({ size: 37, w: 3, h: 2 });
    const image = madeUpImage('luma', 29, 17, 5);
    for (const resyncRows of [0, 2]) {
      const { container } = await encode(book, image, { payload: 'raw', resyncRows });
      expect(reconstruct(book, decodeDamaged(book, container))).toEqual(decode(book, container).pixels);
    }
  });

  it('lets one flipped bit change one block only, markers or not, and conceals indices that name no codeword', async () => {
    const book = madeUpCodebook({ size: 37, w: 2, h: 2 });
    const image = madeUpImage('luma', 20, 12, 9);
    for (const resyncRows of [0, 1]) {
      const { container, encoded } = await encode(book, image, { payload: 'raw', resyncRows });
      for (let bit = 0; bit < (container.length - HEADER_BYTES) * 8; bit += 7) {
        const damaged = Uint8Array.from(container);
        damaged[HEADER_BYTES + Math.floor(bit / 8)] ^= 0x80 >> (bit % 8);
        const got = decodeDamaged(book, damaged);
        let changed = 0;
        for (let i = 0; i < got.indices.length; i += 1) {
          expect(got.indices[i]).toBeLessThan(book.size);
          if (got.indices[i] !== encoded.indices[i]) changed += 1;
        }
        expect(changed).toBeLessThanOrEqual(1);
      }
    }
  });
});

describe('channelCurve', () => {
  it('computes the expected MSE of the closed form exactly as the definition gives it', async () => {
    const book = madeUpCodebook({ size: 37, w: 3, h: 2 });
    const image = madeUpImage('luma', 31, 19, 2);
    const { encoded } = await encode(book, image, { payload: 'raw' });
    for (const ber of [1e-3, 0.05, 0.3]) {
      const curve = await channelCurve(book, [image], { bers: [ber], seeds: 1 });
      const byDefinition = expectedByDefinition(book, image, encoded.indices, ber) / image.pixels.length;
      expect(curve.points[0].expectedMse).toBeCloseTo(byDefinition, 6);
    }
  });

  it('measures an MSE that agrees with the closed form within its statistical error', async () => {
    const book = madeUpCodebook({ size: 16, w: 4, h: 4, color: 'rgb' });
    const images = [madeUpImage('rgb', 40, 36, 1), madeUpImage('rgb', 27, 30, 4)];
    const curve = await channelCurve(book, images, { bers: [1e-3, 1e-2, 1e-1], seeds: 40, seed: 3 });
    for (const point of curve.points) {
      // Five standard errors of the mean over 40 independent seeds: a deviation that large has odds below 10^-6.
      expect(Math.abs(point.mse - point.expectedMse!)).toBeLessThan(5 * point.mseStdError);
      expect(point.mseStdError).toBeGreaterThan(0);
    }
    expect(curve.points[0].psnr).toBeGreaterThan(curve.points[2].psnr);
    expect(curve.points[0].expectedMse!).toBeGreaterThan(curve.noiselessMse);
  });

  it('counts flips over the payload bits, markers included, at the chosen rate', async () => {
    const book = madeUpCodebook({ size: 64, w: 2, h: 2 });
    const image = madeUpImage('luma', 64, 64, 8);
    const plain = await channelCurve(book, [image], { bers: [0.01], seeds: 8 });
    const marked = await channelCurve(book, [image], { bers: [0.01], seeds: 8, resyncRows: 4 });
    // 32 × 32 blocks of 6 bits: 768 bytes; markers every 4 block rows add 7 × 4 bytes.
    expect(plain.payloadBytes).toBe(768);
    expect(marked.payloadBytes).toBe(768 + 7 * 4);
    const p = plain.points[0];
    expect(p.bits).toBe(768 * 8 * 8);
    // Binomial: mean n·p = 491.5, standard deviation sqrt(n·p·(1−p)) = 22.1.
    expect(Math.abs(p.flips - p.bits * 0.01)).toBeLessThan(5 * Math.sqrt(p.bits * 0.01 * 0.99));
  });

  it('gives the same curve for the same seed and leaves the expected curve out for mean-removed codebooks', async () => {
    const book = madeUpCodebook({ size: 8, w: 2, h: 2, meanBits: 4 });
    const image = madeUpImage('luma', 16, 16, 3);
    const a = await channelCurve(book, [image], { bers: [0.01, 0.1], seeds: 3, seed: 9 });
    const b = await channelCurve(book, [image], { bers: [0.01, 0.1], seeds: 3, seed: 9 });
    expect(a).toEqual(b);
    expect(a.points[0].expectedMse).toBeNull();
    expect(a.expectedNote).toMatch(/mean codes/);
    expect(a.points[1].mse).toBeGreaterThan(a.noiselessMse);
  });

  it('refuses a rate outside (0, 0.5] and an empty image list', async () => {
    const book = madeUpCodebook({ size: 8, w: 2, h: 2 });
    const image = madeUpImage('luma', 8, 8, 3);
    await expect(channelCurve(book, [image], { bers: [0.7] })).rejects.toThrow(/bers/);
    await expect(channelCurve(book, [], {})).rejects.toThrow(/no images/);
  });
});

describe('the channel itself', () => {
  it('draws flips only inside the payload', () => {
    const bytes = new Uint8Array(HEADER_BYTES + 100);
    flipBits(bytes, 0.5, createRng(2), HEADER_BYTES);
    expect(bytes.subarray(0, HEADER_BYTES).every((v) => v === 0)).toBe(true);
  });
});
