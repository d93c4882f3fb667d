import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { decodeImage, fromRgb8 } from '../../../server/engine/io/image';
import { lumaBt601 } from '../../../server/engine/io/luma';

// A grey image is decoded to one channel instead of being expanded to sRGB first; the pixels must be exactly those of
// the general path (sharp's sRGB raw, then BT.601 luma or the RGB values), which this test computes independently.

/** Every grey level at least once, odd sizes; with alpha when asked. */
async function greyPng(width: number, height: number, alpha: boolean): Promise<Buffer> {
  const channels = alpha ? 2 : 1;
  const raw = Buffer.alloc(width * height * channels);
  for (let i = 0; i < width * height; i += 1) {
    raw[i * channels] = (i * 37) % 256;
    if (alpha) raw[i * channels + 1] = (i * 11) % 256;
  }
  return sharp(raw, { raw: { width, height, channels } }).toColourspace('b-w').png().toBuffer();
}

async function generalPath(png: Buffer) {
  const out = await sharp(png).removeAlpha().toColourspace('srgb').raw({ depth: 'uchar' }).toBuffer({ resolveWithObject: true });
  expect(out.info.channels).toBe(3);
  return { width: out.info.width, height: out.info.height, rgb: out.data };
}

describe('decoding grey images', () => {
  it('keeps a grey value as its own luma for all 256 values (BT.601 weights sum to 1)', () => {
    const off = Array.from({ length: 256 }, (_, v) => v).filter((v) => Math.fround(lumaBt601(v, v, v)) !== v);
    expect(off).toEqual([]);
  });

  it.each([
    ['grey', false],
    ['grey with alpha', true],
  ])('gives the general path\'s pixels for an 8-bit %s PNG, as luma and as rgb', async (_name, alpha) => {
    const png = await greyPng(67, 9, alpha);
    expect((await sharp(png).metadata()).space).toBe('b-w');
    const general = await generalPath(png);
    for (const color of ['luma', 'rgb'] as const) {
      const want = fromRgb8('x', general.width, general.height, general.rgb, color);
      const got = await decodeImage(png, color, 'x');
      expect({ w: got.width, h: got.height, c: got.channels }).toEqual({ w: want.width, h: want.height, c: want.channels });
      expect(Array.from(got.pixels)).toEqual(Array.from(want.pixels));
    }
  });

  it('leaves a colour image on the general path', async () => {
    const raw = Buffer.from(Array.from({ length: 5 * 4 * 3 }, (_, i) => (i * 29) % 256));
    const png = await sharp(raw, { raw: { width: 5, height: 4, channels: 3 } }).png().toBuffer();
    const general = await generalPath(png);
    expect(Array.from((await decodeImage(png, 'luma')).pixels)).toEqual(Array.from(fromRgb8('x', 5, 4, general.rgb, 'luma').pixels));
  });
});
