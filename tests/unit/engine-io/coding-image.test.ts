import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { decodeImage, decodeImageForCoding, encodeToContainer, tile } from '../../../server/engine';
import { structureBook } from '../../helpers/structure-books';

// The encoder may read an image's decoded bytes instead of its float copy (io/image.ts decodeImageForCoding). The
// reference is decodeImage, the float path every other part of the engine uses: same values, same blocks, same file.

/** An odd-sized PNG with every 8-bit value: grey (one channel, no ICC profile) or sRGB with distinct channels. */
async function png(kind: 'grey' | 'rgb', width: number, height: number): Promise<Buffer> {
  const channels = kind === 'grey' ? 1 : 3;
  const raw = Buffer.alloc(width * height * channels);
  for (let i = 0; i < raw.length; i += 1) raw[i] = (i * 37 + Math.floor(i / 7)) % 256;
  const image = sharp(raw, { raw: { width, height, channels } });
  return (kind === 'grey' ? image.toColourspace('b-w') : image).png().toBuffer();
}

describe('the encoder\'s image', () => {
  it.each([
    ['grey', 'luma', Uint8Array],
    ['grey', 'rgb', Uint8Array],
    ['rgb', 'rgb', Uint8Array],
    ['rgb', 'luma', Float32Array],
  ] as const)('holds decodeImage\'s pixels for a %s PNG as %s (as %o)', async (kind, color, type) => {
    const file = await png(kind, 37, 23);
    const want = await decodeImage(file, color, 'x');
    const got = await decodeImageForCoding(file, color, 'x');
    expect(got.pixels).toBeInstanceOf(type);
    expect({ ...got, pixels: null }).toEqual({ ...want, pixels: null });
    expect(Array.from(got.pixels)).toEqual(Array.from(want.pixels));
    const patch = { width: 4, height: 3, channels: want.channels, color };
    expect(Array.from(tile(got, patch).vectors)).toEqual(Array.from(tile(want, patch).vectors));
  });

  it.each(['luma', 'rgb'] as const)('codes a grey PNG as %s into decodeImage\'s container bytes', async (color) => {
    const file = await png('grey', 61, 45);
    const book = structureBook({ color, w: 4, h: 4, meanBits: color === 'luma' ? 5 : 0, size: 32, structure: { kind: 'full' } });
    const want = await encodeToContainer(book, await decodeImage(file, color, 'x'));
    const got = await encodeToContainer(book, await decodeImageForCoding(file, color, 'x'));
    expect(Buffer.compare(got.container, want.container)).toBe(0);
  });
});
