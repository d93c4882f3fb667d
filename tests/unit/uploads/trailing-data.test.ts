import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { trailingBytes } from '../../../server/services/uploads/trailing-data';

const pixels = { create: { width: 9, height: 7, channels: 3 as const, background: '#3a6070' } };
// A zip local-file-header signature and a few bytes: what an appended archive starts with (APPNOTE.TXT 4.3.7).
const zipTail = Buffer.from([0x50, 0x4b, 0x03, 0x04, 0x14, 0x00, 0x00, 0x00, 0x08, 0x00, 0x11, 0x22]);

/** Deterministic busy pixels (so every codec writes real entropy-coded data), `pages` frames of width × height. */
function busy(width: number, height: number, pages = 1) {
  const raw = Buffer.alloc(width * height * pages * 3);
  for (let i = 0; i < raw.length; i++) raw[i] = (i * 7919 + (i >> 5) * 31) % 251;
  return sharp(raw, { raw: { width, height: height * pages, channels: 3, ...(pages > 1 ? { pageHeight: height } : {}) } });
}

/** Real files of every accepted raster format the walk reads, written by sharp (libpng, mozjpeg, cgif, libwebp, libtiff). */
async function writtenBySharp(): Promise<[label: string, format: string, bytes: Buffer][]> {
  const exif = { IFD0: { Copyright: 'Cellwright test', ImageDescription: 'busy pixels' } };
  return [
    ['PNG', 'png', await busy(40, 30).png().toBuffer()],
    ['baseline JPEG', 'jpeg', await busy(40, 30).jpeg().toBuffer()],
    ['progressive JPEG', 'jpeg', await busy(40, 30).jpeg({ progressive: true }).toBuffer()],
    ['JPEG with EXIF', 'jpeg', await busy(40, 30).withExif(exif).jpeg().toBuffer()],
    ['JPEG, 4:4:4 at quality 95', 'jpeg', await busy(40, 30).jpeg({ chromaSubsampling: '4:4:4', quality: 95 }).toBuffer()],
    ['GIF', 'gif', await busy(40, 30).gif().toBuffer()],
    ['animated GIF', 'gif', await busy(20, 10, 3).gif().toBuffer()],
    ['WebP', 'webp', await busy(40, 30).webp().toBuffer()],
    ['TIFF (JPEG-compressed strips)', 'tiff', await busy(40, 30).tiff().toBuffer()],
    ['TIFF (LZW strips)', 'tiff', await busy(40, 30).tiff({ compression: 'lzw' }).toBuffer()],
    ['TIFF (deflate, EXIF)', 'tiff', await busy(40, 30).withExif(exif).tiff({ compression: 'deflate' }).toBuffer()],
    ['tiled TIFF', 'tiff', await busy(70, 50).tiff({ tile: true, tileWidth: 16, tileHeight: 16, compression: 'lzw' }).toBuffer()],
    ['multi-page TIFF', 'tiff', await busy(20, 10, 3).tiff({ compression: 'lzw' }).toBuffer()],
    ['pyramid TIFF', 'tiff', await busy(90, 70).tiff({ pyramid: true, tile: true, tileWidth: 16, tileHeight: 16 }).toBuffer()],
    ['BigTIFF', 'tiff', await busy(40, 30).tiff({ bigtiff: true, compression: 'deflate' }).toBuffer()],
  ];
}

describe('trailing bytes after the end of an image', () => {
  it('finds none in files written by sharp, progressive, EXIF, animated, tiled, multi-page and BigTIFF ones included', async () => {
    const files = await writtenBySharp();
    expect((await sharp(files.find(([l]) => l === 'multi-page TIFF')![2], { pages: -1 }).metadata()).pages).toBe(3);
    expect((await sharp(files.find(([l]) => l === 'progressive JPEG')![2]).metadata()).isProgressive).toBe(true);
    for (const [label, format, bytes] of files) expect({ label, extra: trailingBytes(format, bytes) }).toEqual({ label, extra: 0 });
  });

  it('counts the bytes of an archive appended to every format it walks', async () => {
    for (const [label, format, bytes] of await writtenBySharp()) {
      expect({ label, extra: trailingBytes(format, Buffer.concat([bytes, zipTail])) }).toEqual({ label, extra: zipTail.length });
    }
  });

  it('counts data appended to a GIF even when it ends in the trailer byte 0x3B', async () => {
    const gif = await busy(40, 30).gif().toBuffer();
    const tail = Buffer.concat([zipTail, Buffer.from('/* payload */;', 'latin1')]);
    expect(trailingBytes('gif', Buffer.concat([gif, tail]))).toBe(tail.length);
  });

  it('counts data appended to a JPEG even when it ends in an end-of-image marker FF D9', async () => {
    for (const options of [{}, { progressive: true }]) {
      const jpeg = await busy(40, 30).jpeg(options).toBuffer();
      const tail = Buffer.concat([zipTail, Buffer.from([0xff, 0xd8, 0x00, 0xff, 0xd9])]);
      expect(trailingBytes('jpeg', Buffer.concat([jpeg, tail]))).toBe(tail.length);
    }
  });

  it('counts a zip appended to a TIFF, which has no end marker, by the furthest byte its IFDs point at', async () => {
    for (const tiff of [await busy(40, 30).tiff().toBuffer(), await busy(20, 10, 3).tiff({ tile: true, tileWidth: 16, tileHeight: 16 }).toBuffer()]) {
      expect(trailingBytes('tiff', Buffer.concat([tiff, zipTail]))).toBe(zipTail.length);
    }
  });

  it('counts bytes hidden between JPEG marker segments, which decoders skip with a warning', async () => {
    const jpeg = await busy(40, 30).jpeg().toBuffer();
    // After SOI (FF D8) comes the first segment's marker; garbage in between is no segment (ITU-T T.81 B.1.1.2).
    const hidden = Buffer.concat([jpeg.subarray(0, 2), zipTail, jpeg.subarray(2)]);
    expect(trailingBytes('jpeg', hidden)).toBe(hidden.length - 2);
  });

  it('tolerates zero fill after a JPEG end-of-image marker', async () => {
    // Some writers pad after FF D9 (ITU-T T.81 allows fill bytes; zero padding is common practice).
    const jpeg = await sharp(pixels).jpeg().toBuffer();
    expect(trailingBytes('jpeg', Buffer.concat([jpeg, Buffer.alloc(16)]))).toBe(0);
  });

  it('leaves files cut short to the decoder, which names the truncation', async () => {
    for (const [label, format, bytes] of await writtenBySharp()) {
      expect({ label, extra: trailingBytes(format, bytes.subarray(0, Math.floor(bytes.length * 0.6))) }).toEqual({ label, extra: 0 });
    }
  });
});
