import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { encodeErrorMapPng, encodePng, errorMap } from '../../../server/engine/io/png';

describe('reconstruction and error-map PNGs', () => {
  it('amplifies the absolute error by 4 and clamps at 255 (worked example)', () => {
    // |10−10|·4 = 0, |20−25|·4 = 20, |30−0|·4 = 120, |0−90|·4 = 360 → 255, |5.3−5|·4 = 1.2 → 1.
    expect(Array.from(errorMap([10, 20, 30, 0, 5.3], [10, 25, 0, 90, 5], 1))).toEqual([0, 20, 120, 255, 1]);
  });

  it('shows the largest channel error of each rgb pixel', () => {
    expect(Array.from(errorMap([10, 10, 10, 0, 0, 0], [11, 13, 10, 0, 0, 2], 3))).toEqual([12, 8]);
  });

  it('writes grey and rgb PNGs that sharp reads back to the same pixels', async () => {
    const grey = Uint8Array.from([0, 1, 2, 253, 254, 255]);
    const g = await encodePng(grey, 3, 2, 1);
    expect((await sharp(g).metadata()).channels).toBe(1);
    expect(new Uint8Array(await sharp(g).extractChannel(0).raw().toBuffer())).toEqual(grey);
    const rgb = Uint8Array.from({ length: 18 }, (_, i) => i * 14);
    const c = await encodePng(rgb, 3, 2, 3);
    expect(new Uint8Array(await sharp(c).raw().toBuffer())).toEqual(rgb);
    const map = await encodeErrorMapPng(rgb, rgb, 3, 2, 3);
    expect(Array.from(await sharp(map).extractChannel(0).raw().toBuffer())).toEqual([0, 0, 0, 0, 0, 0]);
  });
});
