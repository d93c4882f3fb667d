import { crc32, deflateSync } from 'node:zlib';
import sharp from 'sharp';

/** Deterministic RGB noise, so two calls with different seeds never give the same bytes. */
export function noise(width: number, height: number, seed: number, channels = 3): Buffer {
  const out = Buffer.alloc(width * height * channels);
  let x = (seed * 2654435761) >>> 0 || 1;
  for (let i = 0; i < out.length; i += 1) {
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    out[i] = x & 0xff;
  }
  return out;
}

export async function makeImage(
  format: 'png' | 'jpeg' | 'webp' | 'tiff' | 'avif' | 'gif',
  opts: { width?: number; height?: number; seed?: number; channels?: 1 | 3 | 4 } = {},
): Promise<Buffer> {
  const width = opts.width ?? 48;
  const height = opts.height ?? 32;
  const channels = opts.channels ?? 3;
  const img = sharp(noise(width, height, opts.seed ?? 1, channels), { raw: { width, height, channels } });
  return img.toFormat(format).toBuffer();
}

function pngChunk(type: string, data: Buffer): Buffer {
  const length = Buffer.alloc(4);
  length.writeUInt32BE(data.length);
  const typed = Buffer.concat([Buffer.from(type, 'latin1'), data]);
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(typed) >>> 0);
  return Buffer.concat([length, typed, crc]);
}

/**
 * A PNG of a few hundred bytes whose IHDR declares width × height 8-bit greyscale pixels, with a correct
 * CRC on every chunk (PNG specification, ISO/IEC 15948 §5.3 and §11.2.2); only the first rows of data exist.
 */
export function declaredSizePng(width: number, height: number): Buffer {
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(width, 0);
  ihdr.writeUInt32BE(height, 4);
  ihdr[8] = 8; // bit depth
  ihdr[9] = 0; // greyscale
  const rows = deflateSync(Buffer.alloc((width + 1) * 4));
  return Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    pngChunk('IHDR', ihdr),
    pngChunk('IDAT', rows),
    pngChunk('IEND', Buffer.alloc(0)),
  ]);
}

/**
 * A PNG with a valid signature and header whose compressed pixel data is overwritten with junk; the chunk
 * CRC is recomputed, so only the zlib stream inside is broken.
 */
export async function corruptPng(seed = 7): Promise<Buffer> {
  const png = await makeImage('png', { seed });
  const chunks: Buffer[] = [png.subarray(0, 8)];
  let at = 8;
  while (at < png.length) {
    const length = png.readUInt32BE(at);
    const type = png.toString('latin1', at + 4, at + 8);
    const data = Buffer.from(png.subarray(at + 8, at + 8 + length));
    if (type === 'IDAT') {
      for (let i = 2; i < data.length; i += 1) data[i] = (data[i] * 31 + 17) & 0xff;
    }
    chunks.push(pngChunk(type, data));
    at += 12 + length;
  }
  return Buffer.concat(chunks);
}
