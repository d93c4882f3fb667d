import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  BitReader, BitWriter, canonicalCode, codedBits, decodeSymbols, encodeSymbols, HuffmanDecoder, huffmanCodeLengths, kraftSum, MAX_CODE_LENGTH,
} from '../../../server/engine/core/huffman';
import { createRng } from '../../../server/engine/core/rng';

/** Cost Σ count·length of an unlimited Huffman code, by the textbook two-smallest merge (a reference independent of package-merge). */
function unlimitedHuffmanCost(counts: number[]): number {
  const live = counts.filter((c) => c > 0);
  if (live.length === 1) return live[0];
  let cost = 0;
  const heap = [...live].sort((a, b) => a - b);
  while (heap.length > 1) {
    const merged = heap.shift()! + heap.shift()!;
    cost += merged;
    let at = heap.findIndex((w) => w > merged);
    if (at < 0) at = heap.length;
    heap.splice(at, 0, merged);
  }
  return cost;
}

function fibonacci(n: number): number[] {
  const out = [1, 1];
  while (out.length < n) out.push(out[out.length - 1] + out[out.length - 2]);
  return out.slice(0, n);
}

function entropyBits(counts: number[]): number {
  const total = counts.reduce((s, c) => s + c, 0);
  let h = 0;
  for (const c of counts) if (c > 0) h -= (c / total) * Math.log2(c / total);
  return h;
}

const countsArbitrary = fc.array(fc.integer({ min: 0, max: 10_000 }), { minLength: 2, maxLength: 300 }).filter((c) => c.filter((x) => x > 0).length >= 2);

describe('huffmanCodeLengths', () => {
  it('gives a complete code (Kraft sum exactly 1) for two or more used symbols (property)', () => {
    fc.assert(fc.property(countsArbitrary, (counts) => {
      expect(kraftSum(huffmanCodeLengths(counts))).toBe(1);
    }), { numRuns: 200 });
  });

  it('costs exactly an unlimited Huffman code when the limit does not bind (property)', () => {
    fc.assert(fc.property(countsArbitrary, (counts) => {
      const lengths = huffmanCodeLengths(counts, 32);
      expect(codedBits(lengths, counts)).toBe(unlimitedHuffmanCost(counts));
    }), { numRuns: 200 });
  });

  it('keeps Fibonacci counts, whose unlimited code is 29 bits deep, within 16 bits and still complete', () => {
    // Fibonacci weights make the unlimited Huffman tree a chain: depth n − 1 (common practice: the worst case).
    const counts = fibonacci(30);
    const unlimited = huffmanCodeLengths(counts, 32);
    expect(Math.max(...unlimited)).toBe(29);
    const limited = huffmanCodeLengths(counts);
    expect(Math.max(...limited)).toBeLessThanOrEqual(MAX_CODE_LENGTH);
    expect(Math.max(...limited)).toBe(MAX_CODE_LENGTH);
    expect(kraftSum(limited)).toBe(1);
    // The limit costs bits, and never fewer than the unlimited optimum.
    expect(codedBits(limited, counts)).toBeGreaterThan(codedBits(unlimited, counts));
    // More frequent symbols never get longer codes.
    for (let s = 1; s < counts.length; s++) expect(limited[s]).toBeLessThanOrEqual(limited[s - 1]);
  });

  it('costs no more than the best length-limited code found by trying every set of lengths (property)', () => {
    // Package-merge is optimal among prefix codes with lengths ≤ L (Larmore & Hirschberg 1990); checked here by
    // enumerating every length vector in 1..L that satisfies Kraft's inequality on small alphabets.
    fc.assert(fc.property(fc.array(fc.integer({ min: 1, max: 1000 }), { minLength: 2, maxLength: 7 }), fc.integer({ min: 2, max: 4 }), (counts, limit) => {
      fc.pre(counts.length <= 2 ** limit);
      let best = Infinity;
      const lengths = new Array<number>(counts.length).fill(1);
      for (;;) {
        if (kraftSum(lengths) <= 1) best = Math.min(best, codedBits(lengths, counts));
        let i = 0;
        while (i < lengths.length && lengths[i] === limit) lengths[i++] = 1;
        if (i === lengths.length) break;
        lengths[i]++;
      }
      expect(codedBits(huffmanCodeLengths(counts, limit), counts)).toBe(best);
    }), { numRuns: 150 });
  });

  it('keeps every length within the limit for any limit that can hold the symbols (property)', () => {
    fc.assert(fc.property(countsArbitrary, fc.integer({ min: 1, max: 16 }), (counts, limit) => {
      const used = counts.filter((c) => c > 0).length;
      fc.pre(used <= 2 ** limit);
      const lengths = huffmanCodeLengths(counts, limit);
      expect(Math.max(...lengths)).toBeLessThanOrEqual(limit);
      expect(kraftSum(lengths)).toBe(1);
      for (let s = 0; s < counts.length; s++) expect(lengths[s] > 0).toBe(counts[s] > 0);
    }), { numRuns: 300 });
  });

  it('gives a mean length within [H, H + 1) bits of the counts\' entropy (Shannon bound)', () => {
    // Shannon's source coding theorem: an optimal prefix code's mean length L satisfies H ≤ L < H + 1 (common practice).
    const rng = createRng(12);
    for (let trial = 0; trial < 20; trial++) {
      const counts = Array.from({ length: 2 + rng.nextInt(200) }, () => rng.nextInt(1000) * rng.nextInt(1000));
      fc.pre(counts.filter((c) => c > 0).length >= 2);
      const total = counts.reduce((s, c) => s + c, 0);
      const mean = codedBits(huffmanCodeLengths(counts, 32), counts) / total;
      const h = entropyBits(counts);
      expect(mean).toBeGreaterThanOrEqual(h - 1e-12);
      expect(mean).toBeLessThan(h + 1);
    }
  });

  it('gives no code to zero counts and a 1-bit code to a single used symbol', () => {
    expect(Array.from(huffmanCodeLengths([0, 0, 0]))).toEqual([0, 0, 0]);
    expect(Array.from(huffmanCodeLengths([0, 7, 0]))).toEqual([0, 1, 0]);
    expect(Array.from(huffmanCodeLengths([3, 0, 3]))).toEqual([1, 0, 1]);
  });

  it('refuses more used symbols than the limit can hold, and counts that are not integers', () => {
    expect(() => huffmanCodeLengths([1, 1, 1], 1)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_INPUT' }));
    expect(() => huffmanCodeLengths([1, 0.5])).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_INPUT' }));
    expect(() => huffmanCodeLengths([1, -1])).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_INPUT' }));
    expect(() => huffmanCodeLengths([1, 1], 33)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_INPUT' }));
  });
});

describe('canonicalCode', () => {
  it('makes a prefix-free code: no code is a prefix of another (property)', () => {
    fc.assert(fc.property(countsArbitrary, (counts) => {
      const code = canonicalCode(huffmanCodeLengths(counts));
      const words = Array.from(code.codes, (c, s) => (code.lengths[s] ? c.toString(2).padStart(code.lengths[s], '0') : null)).filter((w): w is string => w !== null);
      for (const a of words) for (const b of words) if (a !== b) expect(b.startsWith(a)).toBe(false);
    }), { numRuns: 60 });
  });

  it('refuses lengths over 16 bits and lengths that over-subscribe the code space', () => {
    expect(() => canonicalCode([17, 1])).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_ARGUMENT', field: 'lengths[0]' }));
    expect(() => canonicalCode([1, 1, 1])).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_ARGUMENT' }));
    expect(() => canonicalCode([2, 1.5])).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_ARGUMENT' }));
  });
});

describe('encodeSymbols and HuffmanDecoder', () => {
  it('decodes exactly what it encoded (property)', () => {
    fc.assert(fc.property(countsArbitrary, fc.integer({ min: 0, max: 2 ** 31 }), fc.integer({ min: 0, max: 3000 }), (counts, seed, n) => {
      const code = canonicalCode(huffmanCodeLengths(counts));
      const symbols = counts.flatMap((c, s) => (c > 0 ? [s] : []));
      const rng = createRng(seed);
      const stream = Uint32Array.from({ length: n }, () => symbols[rng.nextInt(symbols.length)]);
      const { bytes, bitLength } = encodeSymbols(code, stream);
      expect(bitLength).toBe(Array.from(stream).reduce((s, x) => s + code.lengths[x], 0));
      expect(bytes.length).toBe(Math.ceil(bitLength / 8));
      expect(Array.from(decodeSymbols(code, bytes, n))).toEqual(Array.from(stream));
    }), { numRuns: 150 });
  });

  it('decodes a stream of a single-symbol code, one bit a symbol', () => {
    const code = canonicalCode(huffmanCodeLengths([0, 0, 9]));
    const { bytes, bitLength } = encodeSymbols(code, [2, 2, 2]);
    expect(bitLength).toBe(3);
    expect(Array.from(new HuffmanDecoder(code).decode(bytes, 3))).toEqual([2, 2, 2]);
  });

  it('refuses a truncated stream with ENGINE_INVALID_BITSTREAM', () => {
    const counts = fibonacci(20);
    const code = canonicalCode(huffmanCodeLengths(counts));
    // The rarest symbols have the 16-bit codes, so cutting the last byte leaves a code unfinished.
    const { bytes } = encodeSymbols(code, [0, 1, 19, 0]);
    expect(() => decodeSymbols(code, bytes.subarray(0, bytes.length - 1), 4)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_BITSTREAM', message: expect.stringMatching(/ends inside symbol/) }));
    // Asking for more symbols than a whole-byte stream holds runs past its end.
    const whole = encodeSymbols(code, [0, 0]);
    expect(whole.bitLength).toBe(32);
    expect(() => decodeSymbols(code, whole.bytes, 3)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_BITSTREAM' }));
    expect(() => decodeSymbols(code, new Uint8Array(0), 1)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_BITSTREAM' }));
  });

  it('refuses a bit pattern no code starts with, non-zero padding and trailing bytes', () => {
    // Lengths (1, 2) leave the pattern 11 unused.
    const code = canonicalCode([1, 2]);
    expect(() => decodeSymbols(code, new Uint8Array([0b11000000]), 1)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_BITSTREAM', message: expect.stringMatching(/no code starts/) }));
    expect(Array.from(decodeSymbols(code, new Uint8Array([0b01000000]), 2))).toEqual([0, 1]);
    expect(() => decodeSymbols(code, new Uint8Array([0b01000001]), 2)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_BITSTREAM', message: expect.stringMatching(/padding/) }));
    expect(() => decodeSymbols(code, new Uint8Array([0b01000000, 0]), 2)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_BITSTREAM', message: expect.stringMatching(/follow the last/) }));
    expect(() => decodeSymbols(canonicalCode([0, 0]), new Uint8Array([0]), 1)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_BITSTREAM' }));
  });

  it('refuses to encode a symbol that has no code', () => {
    const code = canonicalCode([1, 0, 1]);
    expect(() => encodeSymbols(code, [0, 1])).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_ARGUMENT', field: 'symbols[1]' }));
    expect(() => encodeSymbols(code, [3])).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_ARGUMENT' }));
  });
});

describe('BitWriter and BitReader', () => {
  it('read back any sequence of fields of 1..16 bits MSB-first (property)', () => {
    fc.assert(fc.property(fc.array(fc.tuple(fc.integer({ min: 1, max: 16 }), fc.integer({ min: 0, max: 0xffff })), { maxLength: 200 }), (fields) => {
      const writer = new BitWriter();
      for (const [length, value] of fields) writer.write(value, length);
      const { bytes, bitLength } = writer.finish();
      expect(bitLength).toBe(fields.reduce((s, [l]) => s + l, 0));
      const reader = new BitReader(bytes);
      for (const [length, value] of fields) expect(reader.read(length)).toBe(value & ((1 << length) - 1));
      expect(reader.remaining).toBeLessThan(8);
    }), { numRuns: 200 });
  });
});
