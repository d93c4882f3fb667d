import { describe, expect, it } from 'vitest';
import {
  decodedImageBytes,
  imagesToTrainingVectors,
  MemoryBudget,
  streamImagesToTrainingVectors,
  type PixelImage,
  type TrainingImageSource,
} from '../../../server/engine';

/** A smooth but irregular image, so that different patches give different vectors. */
function picture(name: string, width: number, height: number, channels: 1 | 3, seed: number): PixelImage {
  const pixels = new Float32Array(width * height * channels);
  for (let i = 0; i < pixels.length; i += 1) pixels[i] = (Math.sin(i * 0.37 + seed) * 97 + ((i * seed) % 53) + 128) % 256;
  return { name, width, height, channels, color: channels === 3 ? 'rgb' : 'luma', pixels };
}

const sizes: [number, number][] = [[37, 21], [64, 48], [9, 5], [3, 2], [50, 50]];

function pictures(channels: 1 | 3): PixelImage[] {
  return sizes.map(([w, h], i) => picture(`img-${i}`, w, h, channels, i + 1));
}

/**
 * Sources over ready-made images whose decoder counts the images handed out and not yet given back, the way a
 * decoder holding pixels would; `peak` is the most that were out at once.
 */
function countingSources(images: PixelImage[]) {
  const counter = { live: 0, peak: 0, decoded: 0, released: 0 };
  const sources: TrainingImageSource[] = images.map((image) => ({
    name: image.name,
    width: image.width,
    height: image.height,
    async decode() {
      // A fresh copy per decode, as a real decoder makes.
      await Promise.resolve();
      counter.live += 1;
      counter.decoded += 1;
      counter.peak = Math.max(counter.peak, counter.live);
      return { ...image, pixels: image.pixels.slice() };
    },
    release() {
      counter.live -= 1;
      counter.released += 1;
    },
  }));
  return { sources, counter };
}

describe('streaming training-vector sampler', () => {
  it('takes exactly the vectors of decoding every image first, for the same seed', async () => {
    const cases = [
      { color: 'luma' as const, patch: { width: 4, height: 4 }, sample: 60, seed: 7 },
      { color: 'rgb' as const, patch: { width: 2, height: 3 }, sample: 150, seed: 11 },
      { color: 'luma' as const, patch: { width: 2, height: 2 }, stride: 1 },
      { color: 'rgb' as const, patch: { width: 4, height: 2 }, sample: 40, seed: 3, preprocessing: { kind: 'mean-removed' as const, meanBits: 5 } },
    ];
    for (const { color, ...options } of cases) {
      const images = pictures(color === 'rgb' ? 3 : 1);
      const eager = imagesToTrainingVectors(images, options);
      const streamed = await streamImagesToTrainingVectors(countingSources(images).sources, { ...options, color });
      expect(streamed.count).toBe(eager.count);
      expect(streamed.perImage).toEqual(eager.perImage);
      // Bit for bit: the same positions from the same images in the same order.
      expect(Buffer.from(streamed.vectors.buffer).equals(Buffer.from(eager.vectors.buffer))).toBe(true);
    }
  });

  it('never holds more than one decoded image, and gives each back once its vectors are taken', async () => {
    const { sources, counter } = countingSources(pictures(3));
    const out = await streamImagesToTrainingVectors(sources, { color: 'rgb', patch: { width: 2, height: 2 }, sample: 500, seed: 5 });
    expect(out.count).toBe(500);
    expect(counter.decoded).toBe(sizes.length);
    expect(counter.released).toBe(sizes.length);
    expect(counter.peak).toBe(1);
  });

  it('fits in a budget of the vectors plus the largest decoded image, less than all images decoded at once', async () => {
    const images = pictures(3);
    const patch = { width: 2, height: 2 };
    const vectorBytes = 500 * 12 * 4;
    const largest = Math.max(...images.map((i) => decodedImageBytes(i.width, i.height, 'rgb')));
    const all = images.reduce((n, i) => n + decodedImageBytes(i.width, i.height, 'rgb'), 0);
    expect(vectorBytes + largest).toBeLessThan(vectorBytes + all);
    const budget = new MemoryBudget(vectorBytes + largest);
    const sources = images.map((image) => {
      const bytes = decodedImageBytes(image.width, image.height, 'rgb');
      return {
        name: image.name,
        width: image.width,
        height: image.height,
        decode: async () => {
          budget.charge(bytes, `decoding ${image.name}`);
          return image;
        },
        release: () => budget.release(bytes),
      };
    });
    const out = await streamImagesToTrainingVectors(sources, {
      color: 'rgb',
      patch,
      sample: 500,
      seed: 5,
      allocate: (length) => budget.float32(length, 'the vectors', { shared: true }),
    });
    expect(out.vectors.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(budget.peakBytes).toBe(vectorBytes + largest);
  });

  it('refuses an image whose decoded size is not the size it was sampled by', async () => {
    const [image] = pictures(1);
    const source: TrainingImageSource = { name: 'liar.png', width: image.width + 1, height: image.height, decode: async () => image };
    await expect(streamImagesToTrainingVectors([source], { color: 'luma', patch: { width: 2, height: 2 }, sample: 10, seed: 1 })).rejects.toThrow(
      /liar\.png: decoded as 37×21, but its size was given as 38×21/,
    );
  });
});
