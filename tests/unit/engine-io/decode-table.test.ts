import { describe, expect, it } from 'vitest';
import { createRng, makeCodebook, reconstruct, type Codebook, type EncodedImage } from '../../../server/engine';
import { packBits, unpackBits } from '../../../server/engine/format/bit-packing';
import { meanLevel } from '../../../server/engine/io/mean-removal';

// The decoder writes table rows straight into the image (codec.ts writeBlocks, four bytes at a time where it can);
// the reference here is the decoder's definition applied pixel by pixel: pixel (y, x, c) is the codeword component of
// its block (io/patches.ts order) plus the mean level, clamped to 0..255 and rounded half up, padding cropped.

function reference(book: Codebook, enc: EncodedImage): Uint8Array {
  const patch = book.patch!;
  const ch = patch.color === 'rgb' ? 3 : 1;
  const bits = book.preprocessing.kind === 'mean-removed' ? book.preprocessing.meanBits : 0;
  const out = new Uint8Array(enc.width * enc.height * ch);
  for (let y = 0; y < enc.height; y += 1) {
    for (let x = 0; x < enc.width; x += 1) {
      const b = Math.floor(y / patch.height) * enc.blocksX + Math.floor(x / patch.width);
      const comp = ((y % patch.height) * patch.width + (x % patch.width)) * ch;
      for (let c = 0; c < ch; c += 1) {
        const v = book.codewords[enc.indices[b] * book.dimension + comp + c] + (enc.meanCodes ? meanLevel(enc.meanCodes[b], bits) : 0);
        out[(y * enc.width + x) * ch + c] = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
      }
    }
  }
  return out;
}

function setup(pw: number, ph: number, color: 'luma' | 'rgb', width: number, height: number, meanBits: number | null) {
  const rng = createRng(pw * 100 + width);
  const ch = color === 'rgb' ? 3 : 1;
  const d = pw * ph * ch;
  const size = 16;
  // Values beyond 0..255 and halves, so clamping and rounding half up are exercised.
  const codewords = Float32Array.from({ length: size * d }, () => Math.round((rng.next() * 300 - 20) * 2) / 2);
  const preprocessing = meanBits === null ? ({ kind: 'none' } as const) : ({ kind: 'mean-removed', meanBits } as const);
  const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };
  const book = makeCodebook({ size, dimension: d, patch: { width: pw, height: ph, channels: ch, color }, preprocessing, codewords, usage: new Uint32Array(size), training });
  const blocksX = Math.ceil(width / pw);
  const blocksY = Math.ceil(height / ph);
  const indices = Uint32Array.from({ length: blocksX * blocksY }, () => rng.nextInt(size));
  const meanCodes = meanBits === null ? null : Uint8Array.from({ length: blocksX * blocksY }, () => rng.nextInt(2 ** meanBits));
  return { book, enc: { width, height, blocksX, blocksY, indices, meanCodes } satisfies EncodedImage };
}

describe('the decoder\'s table lookup', () => {
  it.each([
    ['8×8 luma, whole blocks (word copies)', 8, 8, 'luma', 64, 40, null],
    ['8×8 luma, cropped right and bottom edges', 8, 8, 'luma', 61, 37, null],
    ['4×4 luma, width not a multiple of four (byte copies)', 4, 4, 'luma', 30, 9, null],
    ['3×2 rgb', 3, 2, 'rgb', 13, 7, null],
    ['4×4 rgb, whole blocks', 4, 4, 'rgb', 16, 8, null],
    ['8×8 luma with mean codes', 8, 8, 'luma', 45, 19, 5],
  ] as const)('writes the pixel-by-pixel reference for %s', (_name, pw, ph, color, width, height, meanBits) => {
    const { book, enc } = setup(pw, ph, color, width, height, meanBits);
    expect(Array.from(reconstruct(book, enc))).toEqual(Array.from(reference(book, enc)));
  });
});

describe('bit packing', () => {
  // Reference: each value written as `bits` binary digits, most significant first, the string zero-padded to whole bytes.
  function packRef(values: number[], bits: number): number[] {
    const s = values.map((v) => v.toString(2).padStart(bits, '0')).join('');
    const padded = s.padEnd(Math.ceil(s.length / 8) * 8, '0');
    return Array.from({ length: padded.length / 8 }, (_, i) => parseInt(padded.slice(i * 8, i * 8 + 8), 2));
  }

  it.each([1, 3, 5, 8, 9, 12, 16, 17, 20, 24])('packs and unpacks %i-bit values as the bit-string reference', (bits) => {
    const rng = createRng(bits);
    const values = Array.from({ length: 53 }, () => rng.nextInt(2 ** bits));
    const out = new Uint8Array(2 + Math.ceil((values.length * bits) / 8));
    const n = packBits(values, bits, out, 2);
    expect(Array.from(out.subarray(2, 2 + n))).toEqual(packRef(values, bits));
    const back = new Uint32Array(values.length);
    unpackBits(out, 2, values.length, bits, back);
    expect(Array.from(back)).toEqual(values);
  });
});
