// The decoder cost a codebook page shows: hand-worked figures for each structure, and the firmware byte counts checked
// against the C header the bundle actually generates.
import { describe, expect, it } from 'vitest';
import { decoderCost, firmwareBundle, fixedPointTable, fixedPointTableBytes, structureTableBytes, type Codebook } from '../../../server/engine';
import { combChildren, structureBook } from '../../helpers/structure-books';

const full = () => structureBook({ color: 'luma', w: 4, h: 4, meanBits: 0, size: 256, structure: { kind: 'full' } });
const ecvq = () =>
  structureBook({ color: 'luma', w: 2, h: 2, meanBits: 4, size: 5, structure: { kind: 'entropy-constrained', lambda: 2, codeLengths: Uint8Array.from([1, 2, 3, 4, 4]) } });
// Comb of depth 3: nodes 0 → 1, 2; 1 → 3, 4; 3 → 5, 6. Leaves 2, 4, 5, 6 (depths 1, 2, 3, 3); internal 0, 1, 3.
const comb = () => structureBook({ color: 'luma', w: 4, h: 4, meanBits: 0, size: 7, structure: { kind: 'tree', balanced: false, children: combChildren(3) } });
const residual = () => structureBook({ color: 'rgb', w: 2, h: 2, meanBits: 0, size: 12, structure: { kind: 'residual', bits: [3, 2], search: { kind: 'm-best', m: 2 } } });

describe('decoder cost', () => {
  it('counts full search: K·d multiply-adds, K − 1 comparisons, a table look-up to decode', () => {
    const c = decoderCost(full());
    // d = 16, 16 pixels a block, K = 256.
    expect(c).toMatchObject({
      structure: 'full', dimension: 16, pixelsPerBlock: 16, encoderCodewords: 256, decoderCodewords: 256,
      // 256 × 16 × 4 bytes of float32 = 16 384, for encoder and decoder alike.
      encoderFloatBytes: 16384, decoderFloatBytes: 16384,
      // uint8: 256 × 16 × 1 = 4096 bytes; full search has no table of its own.
      firmware: [{ type: 'uint8', fractionBits: 0, saturated: 0, codewordBytes: 4096, structureBytes: 0 }],
      // 256 × 16 = 4096 multiply-adds (256 a pixel); 255 comparisons (15.9375 a pixel); nothing to decode.
      perBlock: { encodeMultiplyAdds: 4096, encodeComparisons: 255, decodeAdds: 0, decodeComparisons: 0 },
      perPixel: { encodeMultiplyAdds: 256, encodeComparisons: 255 / 16, decodeAdds: 0, decodeComparisons: 0 },
      // ceil(log2 256) = 8 bits, every block.
      maxIndexBits: 8, meanBits: 0, maxBitsPerBlock: 8, fixedRate: true,
    });
  });

  it('counts an entropy-constrained codebook with the Huffman decode and the mean code', () => {
    const c = decoderCost(ecvq());
    // d = 4 (2 × 2 luma), K = 5, lengths 1, 2, 3, 4, 4, mean-removed in 4 bits.
    expect(c).toMatchObject({
      dimension: 4, pixelsPerBlock: 4, encoderCodewords: 5, decoderCodewords: 5,
      encoderFloatBytes: 5 * 4 * 4, decoderFloatBytes: 80,
      // Encoder: 5 distances of 4 components = 20 multiply-adds, the least of 5 costs = 4 comparisons.
      // Decoder: one comparison a bit read, at most the longest code: 4.
      perBlock: { encodeMultiplyAdds: 20, encodeComparisons: 4, decodeAdds: 0, decodeComparisons: 4 },
      perPixel: { encodeMultiplyAdds: 5, encodeComparisons: 1, decodeAdds: 0, decodeComparisons: 1 },
      // Longest code 4 bits + 4 mean bits = 8 bits a block at worst.
      maxIndexBits: 4, meanBits: 4, maxBitsPerBlock: 8, fixedRate: false,
    });
    // Signed residuals: int16 (5 × 4 × 2 = 40 bytes) and int8 (20 bytes); the code: counts for lengths 0..4
    // (5 × uint16 = 10 bytes) and 5 symbols (10 bytes) = 20.
    expect(c.firmware.map((f) => [f.type, f.codewordBytes, f.structureBytes])).toEqual([['int16', 40, 20], ['int8', 20, 20]]);
  });

  it('counts an unbalanced tree: two distances a level, leaf tests to decode, leaves in the decoder table', () => {
    const c = decoderCost(comb());
    // d = 16; 7 nodes, 4 leaves, depth 3.
    expect(c).toMatchObject({
      encoderCodewords: 7, decoderCodewords: 4,
      // Encoder 7 × 16 × 4 = 448 bytes; decoder 4 × 16 × 4 = 256.
      encoderFloatBytes: 448, decoderFloatBytes: 256,
      // Leaves only in the C table: 4 × 16 = 64 bytes; children of the 3 internal nodes: 6 int16 = 12 bytes.
      firmware: [{ type: 'uint8', codewordBytes: 64, structureBytes: 12 }],
      // 3 levels × 2 children × 16 = 96 multiply-adds (6 a pixel), one comparison a level (3); decoding tests the
      // 4 nodes of the deepest path for a leaf (0.25 a pixel).
      perBlock: { encodeMultiplyAdds: 96, encodeComparisons: 3, decodeAdds: 0, decodeComparisons: 4 },
      perPixel: { encodeMultiplyAdds: 6, encodeComparisons: 3 / 16, decodeAdds: 0, decodeComparisons: 0.25 },
      // The deepest leaf's path: 3 bits.
      maxIndexBits: 3, maxBitsPerBlock: 3, fixedRate: false,
    });
  });

  it('counts residual stages searched M-best, and the stage sums the decoder adds', () => {
    const c = decoderCost(residual());
    // rgb 2 × 2: d = 12 components over 4 pixels. Stages of 3 and 2 bits: 8 + 4 = 12 codewords.
    // Stage 0: 1 candidate sum × 8 codewords = 8 candidates, 8 × 12 = 96 multiply-adds; keeping the 2 best of 8 by
    // insertion: candidate 0 none, candidate 1 one, the other 6 two each: 13 comparisons.
    // Stage 1: min(2, 8) = 2 sums × 4 codewords = 8 candidates: 96 multiply-adds, 13 comparisons.
    // Decoder: the second stage's 12 components added to the first's; a fixed-length index, no comparison.
    expect(c).toMatchObject({
      pixelsPerBlock: 4, dimension: 12, encoderCodewords: 12, decoderCodewords: 12, encoderFloatBytes: 12 * 12 * 4,
      perBlock: { encodeMultiplyAdds: 192, encodeComparisons: 26, decodeAdds: 12, decodeComparisons: 0 },
      perPixel: { encodeMultiplyAdds: 48, encodeComparisons: 6.5, decodeAdds: 3, decodeComparisons: 0 },
      // 3 + 2 = 5 bits, every block.
      maxIndexBits: 5, maxBitsPerBlock: 5, fixedRate: true,
    });
    // Stages are signed: int16 12 × 12 × 2 = 288 bytes, int8 144; first rows (2 × uint16) and bits (2 × uint8) = 6.
    expect(c.firmware.map((f) => [f.type, f.codewordBytes, f.structureBytes])).toEqual([['int16', 288, 6], ['int8', 144, 6]]);
  });
});

/** Bytes of every `static const T name[N]` array in a generated header, by name. */
function headerArrays(header: string, codewordType: string): Map<string, number> {
  const sizes: Record<string, number> = { uint8_t: 1, int8_t: 1, uint16_t: 2, int16_t: 2 };
  const out = new Map<string, number>();
  for (const m of header.matchAll(/static const (\w+) (\w+)\[(\d+)\]/g)) {
    const type = m[1] === 'cw_codeword_t' ? codewordType : m[1];
    out.set(m[2], Number(m[3]) * sizes[type]);
  }
  return out;
}

describe('firmware table bytes', () => {
  const books: [string, () => Codebook][] = [['full', full], ['entropy-constrained', ecvq], ['tree', comb], ['residual', residual]];
  for (const [name, make] of books) {
    for (const width of ['int16', 'int8'] as const) {
      it(`match the arrays of the generated C header (${name}, ${width})`, () => {
        const book = make();
        const bundle = firmwareBundle(book, { residual: width });
        const header = bundle.files.find((f) => f.name === 'cw_codebook.h')!.text;
        const arrays = headerArrays(header, `${bundle.table.type}_t`);
        expect(fixedPointTableBytes(fixedPointTable(book, width), book)).toBe(arrays.get('cw_codewords'));
        // Everything else but the checksum is the structure's own tables.
        const rest = [...arrays].filter(([n]) => n !== 'cw_codewords' && n !== 'cw_codebook_sha256').reduce((a, [, b]) => a + b, 0);
        expect(structureTableBytes(book)).toBe(rest);
      });
    }
  }
});
