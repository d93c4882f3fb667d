import { afterAll, describe, expect, it } from 'vitest';
import { decode, decodeOnThreads, reconstruct, reconstructOnThreads, shutdownEngineWorkers, threadBudget, writeContainer, type Codebook, type EncodedImage } from '../../../server/engine';
import { meanLevel } from '../../../server/engine/io/mean-removal';
import { MIN_PARALLEL_DECODE_BYTES } from '../../../server/engine/parallel/decode-rows';
import type { CodebookStructure } from '../../../server/engine/structures/types';
import { balancedChildren, combChildren, encodedFor, structureBook, type BookSpec } from '../../helpers/structure-books';

// Decoding on several threads writes bands of block rows into one shared image (parallel/decode-rows.ts). Two
// references: the one-thread decoder (reconstruct), and the decoder's definition applied pixel by pixel — pixel
// (y, x, c) is its block's codeword component (io/patches.ts order; residual: the float64 sum of the stage codewords in
// stage order) plus the block's mean level, clamped to 0..255 and rounded half up, the padding cropped.

afterAll(() => shutdownEngineWorkers());

/**
 * Waits until every thread of the budget is free: decoding uses only free threads, and a worker of the previous
 * decode may still hold its thread until it replies.
 */
async function idleBudget(): Promise<void> {
  while (threadBudget.available < threadBudget.total) await new Promise((resolve) => setTimeout(resolve, 5));
}

function perPixel(book: Codebook, enc: EncodedImage): Uint8Array {
  const patch = book.patch!;
  const ch = patch.color === 'rgb' ? 3 : 1;
  const d = book.dimension;
  const per = book.structure.kind === 'residual' ? book.structure.bits.length : 1;
  const bits = book.preprocessing.kind === 'mean-removed' ? book.preprocessing.meanBits : 0;
  const out = new Uint8Array(enc.width * enc.height * ch);
  for (let y = 0; y < enc.height; y += 1) {
    for (let x = 0; x < enc.width; x += 1) {
      const b = Math.floor(y / patch.height) * enc.blocksX + Math.floor(x / patch.width);
      const comp = ((y % patch.height) * patch.width + (x % patch.width)) * ch;
      for (let c = 0; c < ch; c += 1) {
        let v = 0;
        for (let s = 0; s < per; s += 1) v += book.codewords[enc.indices[b * per + s] * d + comp + c];
        v += enc.meanCodes ? meanLevel(enc.meanCodes[b], bits) : 0;
        out[(y * enc.width + x) * ch + c] = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
      }
    }
  }
  return out;
}

/** Index of the first differing byte, or -1 (a readable failure instead of a multi-megabyte diff). */
function firstDifference(a: Uint8Array, b: Uint8Array): number {
  if (a.length !== b.length) return Math.min(a.length, b.length);
  for (let i = 0; i < a.length; i += 1) if (a[i] !== b[i]) return i;
  return -1;
}

const full = { kind: 'full' } as const;
// Sixteen codewords of four bits each: a complete prefix code (Kraft's sum exactly 1).
const ec = { kind: 'entropy-constrained', lambda: 10, codeLengths: new Uint8Array(16).fill(4) } as const;
const residual: CodebookStructure = { kind: 'residual', bits: [4, 3, 2], search: { kind: 'greedy' } };

// Sizes above MIN_PARALLEL_DECODE_BYTES (4 MiB of output), widths and heights that are not multiples of the block.
const CASES: [string, BookSpec, number, number][] = [
  ['full search, 8×8 luma (table rows, word copies)', { color: 'luma', w: 8, h: 8, meanBits: 0, size: 64, structure: full }, 2053, 2047],
  ['full search, 4×4 luma, width not a multiple of four (byte copies)', { color: 'luma', w: 4, h: 4, meanBits: 0, size: 32, structure: full }, 2050, 2051],
  ['full search, 3×2 rgb', { color: 'rgb', w: 3, h: 2, meanBits: 0, size: 16, structure: full }, 1201, 1199],
  ['mean-removed, 8×8 luma', { color: 'luma', w: 8, h: 8, meanBits: 5, size: 32, structure: full }, 2049, 2055],
  ['mean-removed, 4×4 rgb', { color: 'rgb', w: 4, h: 4, meanBits: 6, size: 16, structure: full }, 1203, 1197],
  ['entropy-constrained, 8×4 luma', { color: 'luma', w: 8, h: 4, meanBits: 0, size: 16, structure: ec }, 2051, 2049],
  ['balanced tree, 4×4 luma', { color: 'luma', w: 4, h: 4, meanBits: 0, size: 31, structure: { kind: 'tree', children: balancedChildren(4), balanced: true } }, 2047, 2050],
  ['comb tree, mean-removed 4×4 luma', { color: 'luma', w: 4, h: 4, meanBits: 4, size: 9, structure: { kind: 'tree', children: combChildren(4), balanced: false } }, 2046, 2053],
  ['residual, 4×4 luma', { color: 'luma', w: 4, h: 4, meanBits: 0, size: 28, structure: residual }, 2049, 2051],
  ['residual, mean-removed 2×2 rgb', { color: 'rgb', w: 2, h: 2, meanBits: 3, size: 28, structure: residual }, 1199, 1205],
];

describe('decoding on two threads', () => {
  it.each(CASES)('writes the one-thread decoder\'s and the per-pixel reference\'s image for %s', async (_name, spec, width, height) => {
    const book = structureBook(spec);
    const enc = encodedFor(book, width, height, width + height);
    expect(width * height * (spec.color === 'rgb' ? 3 : 1)).toBeGreaterThan(MIN_PARALLEL_DECODE_BYTES);
    const one = reconstruct(book, enc);
    expect(firstDifference(one, perPixel(book, enc))).toBe(-1);
    // The workers alone (every band written by a pool thread), then this thread with a worker.
    await idleBudget();
    const workersOnly = await reconstructOnThreads(book, enc, { threads: 2, callerThread: false });
    expect(workersOnly.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(firstDifference(workersOnly, one)).toBe(-1);
    await idleBudget();
    expect(firstDifference(await reconstructOnThreads(book, enc, { threads: 2 }), one)).toBe(-1);
  });

  it('decodes a small image on this thread alone, as the one-thread decoder does', async () => {
    const book = structureBook({ color: 'luma', w: 8, h: 8, meanBits: 0, size: 16, structure: full });
    const enc = encodedFor(book, 61, 37, 5);
    const out = await reconstructOnThreads(book, enc, { threads: 2, callerThread: false });
    expect(out.buffer).not.toBeInstanceOf(SharedArrayBuffer);
    expect(Array.from(out)).toEqual(Array.from(perPixel(book, enc)));
  });

  it('decodes container bytes to the one-thread decode\'s pixels', async () => {
    const book = structureBook({ color: 'luma', w: 8, h: 8, meanBits: 0, size: 64, structure: full });
    const enc = encodedFor(book, 2100, 2060, 11);
    const bytes = writeContainer(book, enc);
    const one = decode(book, bytes);
    await idleBudget();
    const two = await decodeOnThreads(book, bytes, { threads: 2, callerThread: false });
    expect({ ...two, pixels: null }).toEqual({ ...one, pixels: null });
    expect(firstDifference(two.pixels, one.pixels)).toBe(-1);
  });

  it('refuses an index outside the codebook before any thread writes', async () => {
    const book = structureBook({ color: 'luma', w: 8, h: 8, meanBits: 0, size: 64, structure: full });
    const enc = encodedFor(book, 2100, 2060, 3);
    enc.indices[enc.indices.length - 1] = 64;
    await expect(reconstructOnThreads(book, enc, { threads: 2 })).rejects.toThrow(/refers to codeword 64/);
  });
});
