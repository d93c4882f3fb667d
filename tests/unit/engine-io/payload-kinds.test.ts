import { readFileSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import {
  decode, encode, makeCodebook, parseCodebookJson, readContainer, readContainerHeader, shutdownEngineWorkers, type Codebook, type PixelImage,
} from '../../../server/engine';
import { HEADER_BYTES } from '../../../server/engine/format/container';

afterAll(() => shutdownEngineWorkers());

const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

/** A made-up codebook: K codewords of a small seeded pseudo-random pattern (linear congruential, Numerical Recipes constants). */
function book(color: 'luma' | 'rgb', w: number, h: number, size: number, meanBits: number): Codebook {
  const channels = color === 'rgb' ? 3 : 1;
  const d = w * h * channels;
  const codewords = new Float32Array(size * d);
  let s = size * 7919 + meanBits;
  for (let i = 0; i < codewords.length; i += 1) {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    codewords[i] = meanBits > 0 ? (s / 2 ** 32) * 120 - 60 : (s / 2 ** 32) * 255;
  }
  const preprocessing = meanBits > 0 ? { kind: 'mean-removed' as const, meanBits } : { kind: 'none' as const };
  return makeCodebook({ size, dimension: d, patch: { width: w, height: h, channels, color }, preprocessing, codewords, usage: new Uint32Array(size), training });
}

function picture(color: 'luma' | 'rgb', width: number, height: number): PixelImage {
  const channels = color === 'rgb' ? 3 : 1;
  const pixels = new Float32Array(width * height * channels);
  for (let i = 0; i < pixels.length; i += 1) pixels[i] = (Math.sin(i * 0.37) * 0.5 + 0.5) * 255;
  return { name: 'made-up', width, height, color, channels, pixels };
}

/** The fixed rate worked out here, independently of the writer: FORMAT.md, "Payload before coding". */
function fixedRateBytes(blocksX: number, blocksY: number, b: number, m: number, rowsPer: number): number {
  let total = 0;
  let segments = 0;
  for (let row = 0; row < blocksY; row += rowsPer) {
    const n = Math.min(rowsPer, blocksY - row) * blocksX;
    total += Math.ceil((n * b) / 8) + Math.ceil((n * m) / 8);
    segments += 1;
  }
  return total + 4 * (segments - 1);
}

const cases = [
  { color: 'luma' as const, w: 4, h: 4, size: 5, m: 0, width: 37, height: 23 },
  { color: 'luma' as const, w: 2, h: 3, size: 256, m: 0, width: 19, height: 11 },
  { color: 'rgb' as const, w: 3, h: 2, size: 3, m: 5, width: 20, height: 9 },
  { color: 'luma' as const, w: 4, h: 2, size: 1, m: 3, width: 9, height: 9 },
  { color: 'rgb' as const, w: 2, h: 2, size: 700, m: 8, width: 13, height: 17 },
];

describe('raw fixed-rate payload', () => {
  for (const c of cases) {
    const b = Math.ceil(Math.log2(c.size));
    it(`is exactly blocks × (${b} + ${c.m}) bits, byte-padded per stream, plus the header (${c.color} ${c.w}×${c.h}, K=${c.size})`, async () => {
      const cb = book(c.color, c.w, c.h, c.size, c.m);
      const { container } = await encode(cb, picture(c.color, c.width, c.height), { payload: 'raw' });
      const [bx, by] = [Math.ceil(c.width / c.w), Math.ceil(c.height / c.h)];
      expect(container[5]).toBe(0);
      expect(container[4]).toBe(1);
      expect(container.length).toBe(HEADER_BYTES + Math.ceil((bx * by * b) / 8) + Math.ceil((bx * by * c.m) / 8));
    });

    it(`adds only 4 bytes a marker and each segment's padding with a marker every 2 block rows (${c.color}, K=${c.size})`, async () => {
      const cb = book(c.color, c.w, c.h, c.size, c.m);
      const image = picture(c.color, c.width, c.height);
      const plain = await encode(cb, image, { payload: 'raw' });
      const marked = await encode(cb, image, { payload: 'raw', resyncRows: 2 });
      const [bx, by] = [Math.ceil(c.width / c.w), Math.ceil(c.height / c.h)];
      expect(marked.container.length).toBe(HEADER_BYTES + fixedRateBytes(bx, by, b, c.m, 2));
      expect(marked.container[4]).toBe(2);
      expect(marked.container[11]).toBe(2);
      expect(decode(cb, marked.container).pixels).toEqual(decode(cb, plain.container).pixels);
    });
  }

  it('puts FF 52 and the segment number (uint16 LE) at the start of every segment but the first', async () => {
    // 4×4 blocks of a 16×40 luma image, K = 16: 4 blocks a row, 10 block rows; 3 rows a segment → 4 segments of
    // 12, 12, 12 and 4 blocks at 4 bits: 6, 6, 6 and 2 bytes, markers before segments 1, 2, 3.
    const cb = book('luma', 4, 4, 16, 0);
    const { container } = await encode(cb, picture('luma', 16, 40), { payload: 'raw', resyncRows: 3 });
    const payload = container.subarray(HEADER_BYTES);
    expect(payload.length).toBe(6 + 4 + 6 + 4 + 6 + 4 + 2);
    expect(Array.from(payload.subarray(6, 10))).toEqual([0xff, 0x52, 1, 0]);
    expect(Array.from(payload.subarray(16, 20))).toEqual([0xff, 0x52, 2, 0]);
    expect(Array.from(payload.subarray(26, 30))).toEqual([0xff, 0x52, 3, 0]);
    expect(readContainerHeader(container)).toMatchObject({ version: 2, resyncRows: 3, coding: 'raw' });
  });

  it('refuses a damaged marker even with a CRC-32 recomputed to match', async () => {
    const cb = book('luma', 4, 4, 16, 0);
    const { container } = await encode(cb, picture('luma', 16, 40), { payload: 'raw', resyncRows: 3 });
    const bad = Buffer.from(container);
    bad[HEADER_BYTES + 16 + 2] = 7;
    const { crc32 } = await import('node:zlib');
    bad.writeUInt32LE(crc32(bad.subarray(HEADER_BYTES)), 60);
    expect(() => readContainer(cb, bad)).toThrow(/resynchronisation marker 2 at payload byte 16 is damaged/);
  });

  it('stores packed as deflate or brotli even when raw is smaller, and auto as the smallest of the three', async () => {
    // A 2×2-block, 4-codeword image of noise-like indices: compression cannot beat 2 bits a block by much, if at all.
    const cb = book('luma', 2, 2, 4, 0);
    const image = picture('luma', 6, 4);
    const raw = (await encode(cb, image, { payload: 'raw' })).container;
    const packed = (await encode(cb, image, { payload: 'packed' })).container;
    const auto = (await encode(cb, image)).container;
    expect([1, 2]).toContain(packed[5]);
    expect(packed.length).toBeGreaterThan(raw.length);
    expect(auto.length).toBe(Math.min(raw.length, packed.length));
    expect(auto[5]).toBe(0);
    for (const f of [raw, packed, auto]) expect(decode(cb, f).pixels).toEqual(decode(cb, raw).pixels);
  });

  it('refuses markers with a compressed payload', async () => {
    const cb = book('luma', 4, 4, 16, 0);
    await expect(encode(cb, picture('luma', 16, 16), { payload: 'auto', resyncRows: 2 })).rejects.toThrow(/markers need the raw payload/);
  });

  it('refuses a version 1 file whose reserved byte 11 is set, and markers claimed over a deflated payload', async () => {
    const cb = book('luma', 4, 4, 16, 0);
    const raw = Buffer.from((await encode(cb, picture('luma', 16, 16), { payload: 'raw' })).container);
    raw[11] = 2;
    expect(() => readContainerHeader(raw)).toThrow(/reserved header byte 11/);
    const packed = Buffer.from((await encode(cb, picture('luma', 16, 16), { payload: 'packed' })).container);
    packed[4] = 2;
    packed[11] = 2;
    expect(() => readContainerHeader(packed)).toThrow(/markers with a (deflate|brotli) payload/);
  });
});

describe('container version 1', () => {
  const dir = new URL('../../fixtures/container-v1/', import.meta.url);
  // Written by the version 1 writer before version 2 existed (an invented codebook and image).
  const fixtureBook = parseCodebookJson(readFileSync(new URL('codebook.json', dir), 'utf8'));
  const fixture = readFileSync(new URL('image.cwvq', dir));

  it('still decodes a version 1 file to the pixels it decoded to when written', () => {
    expect(fixture[4]).toBe(1);
    expect(Buffer.from(decode(fixtureBook, fixture).pixels).equals(readFileSync(new URL('decoded.rgb', dir)))).toBe(true);
  });

  it('is what the writer still writes without markers, byte for byte', async () => {
    const [width, height] = [8, 5];
    const pixels = new Float32Array(width * height * 3);
    for (let i = 0; i < pixels.length; i += 1) pixels[i] = (i * 53) % 256; // the fixture's own image
    const { container } = await encode(fixtureBook, { name: 'fixture', width, height, color: 'rgb', channels: 3, pixels });
    expect(container.equals(fixture)).toBe(true);
  });
});
