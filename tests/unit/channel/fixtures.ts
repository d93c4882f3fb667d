import { makeCodebook, type Codebook, type PixelImage } from '../../../server/engine';

export const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

/** Linear congruential generator (Numerical Recipes constants): seeded, so every run tests the same values. */
export function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

/** A made-up luma or RGB codebook: plain codewords drawn from [−10, 265] (clamping is exercised), residuals from ±60. */
export function madeUpCodebook(o: { size: number; w: number; h: number; color?: 'luma' | 'rgb'; meanBits?: number; seed?: number; usage?: 'zero' | 'random' }): Codebook {
  const color = o.color ?? 'luma';
  const channels = color === 'rgb' ? 3 : 1;
  const d = o.w * o.h * channels;
  const next = lcg(o.seed ?? o.size * 131 + d);
  const codewords = new Float32Array(o.size * d);
  for (let i = 0; i < codewords.length; i += 1) codewords[i] = o.meanBits ? (next() * 2 - 1) * 60 : next() * 275 - 10;
  const usage = Uint32Array.from({ length: o.size }, () => (o.usage === 'random' ? Math.floor(next() * 1000) : 0));
  const preprocessing = o.meanBits ? { kind: 'mean-removed' as const, meanBits: o.meanBits } : { kind: 'none' as const };
  return makeCodebook({ size: o.size, dimension: d, patch: { width: o.w, height: o.h, channels, color }, preprocessing, codewords, usage, training });
}

/** Smooth structure plus noise, whole numbers as decoded 8-bit images are. */
export function madeUpImage(color: 'luma' | 'rgb', width: number, height: number, seed: number): PixelImage {
  const channels = color === 'rgb' ? 3 : 1;
  const next = lcg(seed);
  const pixels = new Float32Array(width * height * channels);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      for (let ch = 0; ch < channels; ch += 1) {
        const v = 128 + 80 * Math.sin(x / 4 + ch) * Math.cos(y / 5) + 40 * (next() - 0.5);
        pixels[(y * width + x) * channels + ch] = Math.max(0, Math.min(255, Math.round(v)));
      }
    }
  }
  return { name: `made-up-${width}x${height}-${seed}`, width, height, color, channels, pixels };
}
