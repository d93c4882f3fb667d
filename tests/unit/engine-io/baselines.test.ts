import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { baselines, canEncodeAvif, fromRgb8, ssimOfImages, type PixelImage } from '../../../server/engine';
import { encodeWith } from '../../../server/engine/metrics/baselines';

function photoLike(width: number, height: number): Uint8Array {
  const rgb = new Uint8Array(width * height * 3);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      for (let c = 0; c < 3; c += 1) rgb[(y * width + x) * 3 + c] = Math.round(127 + 80 * Math.sin(x / (4 + c)) * Math.cos(y / 6) + 40 * Math.sin((x + y) * 0.7));
    }
  }
  return rgb;
}

const W = 48;
const H = 33;
const luma: PixelImage = fromRgb8('luma', W, H, photoLike(W, H), 'luma');
const rgb: PixelImage = fromRgb8('rgb', W, H, photoLike(W, H), 'rgb');

describe('codec baselines', () => {
  it('codes luma sets as one-component (grey) JPEG files', async () => {
    const file = await encodeWith('jpeg', luma, 75);
    const meta = await sharp(file).metadata();
    expect([meta.format, meta.channels]).toEqual(['jpeg', 1]);
  });

  it('measures rate as bytes × 8 / pixels and MSE/PSNR/SSIM on the decoded image, checked against sharp directly', async () => {
    const [point] = await baselines([luma], { codecs: ['jpeg'], qualities: [40] });
    // Independent measurement: sharp's own JPEG encode of the same grey pixels, decoded by sharp, errors summed here.
    const grey = Buffer.from(luma.pixels.map((v) => Math.round(v)));
    const file = await sharp(grey, { raw: { width: W, height: H, channels: 1 } }).toColourspace('b-w').jpeg({ quality: 40 }).toBuffer();
    const decoded = await sharp(file).extractChannel(0).raw().toBuffer();
    let sse = 0;
    for (let i = 0; i < decoded.length; i += 1) sse += (luma.pixels[i] - decoded[i]) ** 2;
    expect(point.bytes).toBe(file.length);
    expect(point.bpp).toBeCloseTo((file.length * 8) / (W * H), 12);
    expect(point.mse).toBeCloseTo(sse / (W * H), 9);
    // PSNR for 8-bit data, 10·log10(255²/MSE) (common practice).
    expect(point.psnr).toBeCloseTo(10 * Math.log10((255 * 255) / (sse / (W * H))), 9);
    expect(point.ssim).toBeCloseTo(ssimOfImages(luma.pixels, new Uint8Array(decoded), W, H, 1)!, 12);
  });

  it('gives lower distortion at higher quality for JPEG and WebP on colour images', async () => {
    const points = await baselines([rgb], { codecs: ['jpeg', 'webp'], qualities: [10, 90] });
    expect(points.map((q) => `${q.codec}:${q.quality}`)).toEqual(['jpeg:10', 'jpeg:90', 'webp:10', 'webp:90']);
    expect(points[1].mse).toBeLessThan(points[0].mse);
    expect(points[3].mse).toBeLessThan(points[2].mse);
    expect(points[1].bpp).toBeGreaterThan(points[0].bpp);
  });

  it('detects AVIF support at run time and measures it when present', async () => {
    const supported = await canEncodeAvif();
    expect(supported).toBe(sharp.format.heif.output.buffer === true);
    if (supported) {
      const [point] = await baselines([rgb], { codecs: ['avif'], qualities: [50] });
      expect(point.bpp).toBeGreaterThan(0);
    } else {
      await expect(baselines([rgb], { codecs: ['avif'] })).rejects.toThrow(/cannot encode AVIF/);
    }
  });

  it('rejects a quality outside 1..100 with the field named', async () => {
    await expect(baselines([rgb], { qualities: [0] })).rejects.toThrow(/qualities\[0\]/);
  });
});
