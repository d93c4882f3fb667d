import { deflateRawSync, crc32 } from 'node:zlib';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decode, encode, makeCodebook, shutdownEngineWorkers, type Codebook, type PixelImage } from '../../../server/engine';
import { HEADER_BYTES, readContainer } from '../../../server/engine/format/container';

afterAll(() => shutdownEngineWorkers());

const patch = { width: 4, height: 4, channels: 1 as const, color: 'luma' as const };
const training = { source: 'hand-made', vectorCount: 4, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

/** Four flat codewords at 0, 85, 170, 255: a hand-made codebook, so expected indices can be worked out. */
function flatCodebook(offset = 0): Codebook {
  const codewords = new Float32Array(4 * 16);
  [0, 85, 170, 255].forEach((v, i) => codewords.fill(v + offset, i * 16, (i + 1) * 16));
  return makeCodebook({ size: 4, dimension: 16, patch, preprocessing: { kind: 'none' }, codewords, usage: new Uint32Array(4), training });
}

function image(): PixelImage {
  const width = 10;
  const height = 7;
  const pixels = new Float32Array(width * height);
  for (let i = 0; i < pixels.length; i += 1) pixels[i] = (i % width) * 20;
  return { name: 'ramp', width, height, color: 'luma', channels: 1, pixels };
}

let book: Codebook;
let file: Buffer;
beforeAll(async () => {
  book = flatCodebook();
  file = (await encode(book, image())).container;
});

describe('coded image container', () => {
  it('stores one 2-bit index per 4×4 block of a 10×7 image, 3 × 2 blocks in raster order', () => {
    const coded = readContainer(book, file);
    expect(coded).toMatchObject({ width: 10, height: 7, blocksX: 3, blocksY: 2 });
    // Worked by hand: every row is 0, 20, …, 180. For a flat codeword c, Σ(v − c)² = Σ(v − m)² + n(m − c)², so the nearest
    // flat codeword is the one nearest the block mean m. Columns 0–3: m = 30 → 0 (index 0); columns 4–7: m = 110 → 85
    // (index 1); columns 8–9 padded by replication to 160, 180, 180, 180: m = 175 → 170 (index 2). Both block rows agree.
    expect(Array.from(coded.indices)).toEqual([0, 1, 2, 0, 1, 2]);
  });

  it('rejects a file cut short, in the header or in the payload', () => {
    expect(() => decode(book, file.subarray(0, 40))).toThrow(/truncated: 40 bytes, the header alone is 68/);
    expect(() => decode(book, file.subarray(0, file.length - 1))).toThrow(/truncated: payload should be/);
  });

  it('rejects bytes appended after the payload', () => {
    expect(() => decode(book, Buffer.concat([file, Buffer.from([0])]))).toThrow(/1 unexpected bytes after the payload/);
  });

  it('rejects a foreign file', async () => {
    const png = await sharp(Buffer.alloc(12, 9), { raw: { width: 2, height: 2, channels: 3 } }).png().toBuffer();
    expect(() => decode(book, png)).toThrow(/not a Cellwright coded image/);
    expect(() => decode(book, new Uint8Array(0))).toThrow(/not a Cellwright coded image/);
  });

  it('rejects a codebook whose checksum differs from the one it was coded with', () => {
    expect(() => decode(flatCodebook(1), file)).toThrow(/coded with a different codebook/);
    expect(() => decode(flatCodebook(1), file)).toThrow(expect.objectContaining({ code: 'ENGINE_CHECKSUM_MISMATCH' }));
  });

  it('rejects a payload whose CRC-32 does not match', () => {
    const bad = Buffer.from(file);
    bad.writeUInt32LE((bad.readUInt32LE(60) ^ 1) >>> 0, 60);
    expect(() => decode(book, bad)).toThrow(/CRC-32 does not match/);
  });

  it('rejects an unknown version or coding', () => {
    const v4 = Buffer.from(file);
    v4[4] = 4;
    expect(() => decode(book, v4)).toThrow(/unsupported container version 4 \(this build reads 1 to 3\)/);
    const coding = Buffer.from(file);
    coding[5] = 9;
    expect(() => decode(book, coding)).toThrow(/unknown payload coding 9/);
  });

  it('reads a payload deflated by zlib (RFC 1951) that it did not write itself', () => {
    // Rebuild the same coded image by hand with coding 1: indices 0,1,2,0,1,2 at 2 bits → 0001 1000 0110 (0000 pad).
    const payload = Uint8Array.from([0b00011000, 0b01100000]);
    const stored = deflateRawSync(payload);
    const hand = Buffer.alloc(HEADER_BYTES + stored.length);
    file.copy(hand, 0, 0, HEADER_BYTES);
    hand[5] = 1;
    hand.writeUInt32LE(payload.length, 56);
    hand.writeUInt32LE(crc32(payload), 60);
    hand.writeUInt32LE(stored.length, 64);
    hand.set(stored, HEADER_BYTES);
    expect(decode(book, hand).pixels).toEqual(decode(book, file).pixels);
  });

  it('rejects a codebook with a different patch even when sizes agree', () => {
    const other = makeCodebook({
      size: 4, dimension: 16, patch: { width: 2, height: 8, channels: 1, color: 'luma' }, preprocessing: { kind: 'none' },
      codewords: book.codewords, usage: new Uint32Array(4), training,
    });
    // Same codewords, same checksum, different geometry: the header catches it.
    expect(other.checksum).toBe(book.checksum);
    expect(() => decode(other, file)).toThrow(/does not match the codebook/);
  });
});
