import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { decodeImage, toUint8 } from '../../../server/engine/io/image';
import { lumaBt601 } from '../../../server/engine/io/luma';

// Rec. ITU-R BT.601: Y' = 0.299 R' + 0.587 G' + 0.114 B'. On the 8-bit scale pure red, green and blue give
// 0.299·255 = 76.245, 0.587·255 = 149.685 and 0.114·255 = 29.07 (worked by hand from the published weights).
describe('BT.601 luma', () => {
  it('gives 76.245, 149.685 and 29.07 for pure red, green and blue', () => {
    expect(lumaBt601(255, 0, 0)).toBeCloseTo(76.245, 10);
    expect(lumaBt601(0, 255, 0)).toBeCloseTo(149.685, 10);
    expect(lumaBt601(0, 0, 255)).toBeCloseTo(29.07, 10);
  });

  it('keeps a grey pixel at its own value, since the weights sum to 1 (ITU-R BT.601)', () => {
    for (const v of [0, 1, 127, 128, 254, 255]) expect(lumaBt601(v, v, v)).toBeCloseTo(v, 10);
  });

  it('decodes a PNG of red, green, blue and white pixels to unrounded BT.601 luma', async () => {
    const rgb = Buffer.from([255, 0, 0, 0, 255, 0, 0, 0, 255, 255, 255, 255]);
    const png = await sharp(rgb, { raw: { width: 2, height: 2, channels: 3 } }).png().toBuffer();
    const image = await decodeImage(png, 'luma', 'rgbw.png');
    expect(image).toMatchObject({ width: 2, height: 2, channels: 1, color: 'luma' });
    // Float32 storage: ~1e-5 of the exact products.
    expect(Array.from(image.pixels).map((v) => Number(v.toFixed(3)))).toEqual([76.245, 149.685, 29.07, 255]);
  });

  it('decodes rgb as R, G, B interleaved per pixel', async () => {
    const rgb = Buffer.from([10, 20, 30, 40, 50, 60]);
    const png = await sharp(rgb, { raw: { width: 2, height: 1, channels: 3 } }).png().toBuffer();
    const image = await decodeImage(png, 'rgb', 'two.png');
    expect(Array.from(image.pixels)).toEqual([10, 20, 30, 40, 50, 60]);
  });

  it('rejects bytes that are not an image with a typed error naming the file', async () => {
    await expect(decodeImage(Buffer.from('definitely not an image'), 'luma', 'broken.png')).rejects.toMatchObject({
      name: 'EngineInputError',
      code: 'ENGINE_INVALID_IMAGE',
      message: expect.stringMatching(/^broken\.png: cannot decode image/),
    });
  });

  it('clamps to 0..255 and rounds half up when going to 8 bits', () => {
    expect(Array.from(toUint8([-3, 0.49, 0.5, 127.5, 254.6, 300]))).toEqual([0, 0, 1, 128, 255, 255]);
  });
});
