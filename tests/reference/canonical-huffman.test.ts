import { describe, expect, it } from 'vitest';
import { canonicalCode, decodeSymbols, encodeSymbols } from '../../server/engine/core/huffman';

const bitString = (code: number, length: number) => code.toString(2).padStart(length, '0');

describe('canonical code assignment (RFC 1951 §3.2.2)', () => {
  it('gives the codes of the worked example for lengths (3, 3, 3, 3, 3, 2, 4, 4)', () => {
    // RFC 1951 §3.2.2: symbols A..H with these lengths get
    // A 010, B 011, C 100, D 101, E 110, F 00, G 1110, H 1111.
    const code = canonicalCode([3, 3, 3, 3, 3, 2, 4, 4]);
    const written = Array.from(code.codes, (c, s) => bitString(c, code.lengths[s]));
    expect(written).toEqual(['010', '011', '100', '101', '110', '00', '1110', '1111']);
    expect(code.maxLength).toBe(4);
  });

  it('writes the example codes MSB-first as the bit stream', () => {
    // Same RFC example: "FAH" is 00 010 1111, padded with zeros to 0001 0111 1000 0000.
    const code = canonicalCode([3, 3, 3, 3, 3, 2, 4, 4]);
    const { bytes, bitLength } = encodeSymbols(code, [5, 0, 7]);
    expect(bitLength).toBe(9);
    expect(Array.from(bytes)).toEqual([0b00010111, 0b10000000]);
    expect(Array.from(decodeSymbols(code, bytes, 3))).toEqual([5, 0, 7]);
  });
});
