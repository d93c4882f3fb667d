import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { trailingBytes } from '../../../server/services/uploads/trailing-data';

const pixels = { create: { width: 9, height: 7, channels: 3 as const, background: '#3a6070' } };
// A zip local-file-header signature and a few bytes: what an appended archive starts with (APPNOTE.TXT 4.3.7).
const zipTail = Buffer.from([0x50, 0x4b, 0x03, 0x04, 0x14, 0x00, 0x00, 0x00, 0x08, 0x00, 0x11, 0x22]);

describe('trailing bytes after the end of an image', () => {
  it('finds none in files written by sharp (libpng, mozjpeg, cgif, libwebp)', async () => {
    expect(trailingBytes('png', await sharp(pixels).png().toBuffer())).toBe(0);
    expect(trailingBytes('jpeg', await sharp(pixels).jpeg().toBuffer())).toBe(0);
    expect(trailingBytes('gif', await sharp(pixels).gif().toBuffer())).toBe(0);
    expect(trailingBytes('webp', await sharp(pixels).webp().toBuffer())).toBe(0);
  });

  it('counts the bytes of an archive appended to a PNG, JPEG, GIF or WebP', async () => {
    for (const [format, image] of [
      ['png', await sharp(pixels).png().toBuffer()],
      ['jpeg', await sharp(pixels).jpeg().toBuffer()],
      ['gif', await sharp(pixels).gif().toBuffer()],
      ['webp', await sharp(pixels).webp().toBuffer()],
    ] as const) {
      expect(trailingBytes(format, Buffer.concat([image, zipTail]))).toBe(zipTail.length);
    }
  });

  it('tolerates zero fill after a JPEG end-of-image marker', async () => {
    // Some writers pad after FF D9 (ITU-T T.81 allows fill bytes; zero padding is common practice).
    const jpeg = await sharp(pixels).jpeg().toBuffer();
    expect(trailingBytes('jpeg', Buffer.concat([jpeg, Buffer.alloc(16)]))).toBe(0);
  });

  it('leaves formats without a single end marker to the decoder', async () => {
    const tiff = await sharp(pixels).tiff().toBuffer();
    expect(trailingBytes('tiff', Buffer.concat([tiff, zipTail]))).toBe(0);
  });
});
