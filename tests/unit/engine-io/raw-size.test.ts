// The raw container size (what a table-lookup decoder reads) for every codebook structure: computed without coding,
// it must equal the byte length of a container actually written with the raw payload (no general-purpose coder), and
// the layout of FORMAT.md ("Coded image container", "Version 3: index layouts") worked out by hand.
import { describe, expect, it } from 'vitest';
import { rawContainerBytes, rawSetBytes, writeContainer, type Codebook } from '../../../server/engine';
import { bppRawOf, toImageMetrics } from '../../../server/services/evaluation-results';
import { balancedChildren, combChildren, encodedFor, structureBook, type BookSpec } from '../../helpers/structure-books';

const geometryOf = (book: Codebook) => ({
  patch: book.patch!, size: book.size, meanBits: book.preprocessing.kind === 'mean-removed' ? book.preprocessing.meanBits : 0, structure: book.structure,
});

const CASES: (BookSpec & { name: string })[] = [
  { name: 'full search K = 20', color: 'luma', w: 4, h: 4, meanBits: 0, size: 20, structure: { kind: 'full' } },
  { name: 'entropy-constrained, mean-removed', color: 'rgb', w: 2, h: 3, meanBits: 5, size: 9, structure: { kind: 'entropy-constrained', lambda: 3, codeLengths: Uint8Array.from([1, 2, 3, 4, 5, 6, 7, 8, 8]) } },
  { name: 'balanced tree of depth 3', color: 'luma', w: 4, h: 4, meanBits: 0, size: 15, structure: { kind: 'tree', balanced: true, children: balancedChildren(3) } },
  { name: 'unbalanced tree (a comb of depth 6), mean-removed', color: 'luma', w: 3, h: 2, meanBits: 4, size: 13, structure: { kind: 'tree', balanced: false, children: combChildren(6) } },
  { name: 'residual stages 4 + 3 + 2', color: 'luma', w: 4, h: 4, meanBits: 0, size: 28, structure: { kind: 'residual', bits: [4, 3, 2], search: { kind: 'greedy' } } },
];

describe('raw container size', () => {
  for (const c of CASES) {
    it(`equals the written raw container for ${c.name}`, () => {
      const book = structureBook(c);
      // 37 × 23 pixels: edge blocks on both sides, and block counts that leave the streams' last bytes partly padded.
      const encoded = encodedFor(book, 37, 23, 11);
      const written = writeContainer(book, encoded, { payload: 'raw' });
      expect(written[5]).toBe(0); // coding 0: raw
      expect(rawContainerBytes(37, 23, geometryOf(book), { indices: encoded.indices })).toBe(written.length);
      // A container written with `auto` is the raw one for a variable-length layout, so its length stands for it.
      const auto = writeContainer(book, encoded);
      if (c.structure.kind === 'entropy-constrained' || (c.structure.kind === 'tree' && !c.structure.balanced)) {
        expect(rawContainerBytes(37, 23, geometryOf(book), { writtenBytes: auto.length })).toBe(written.length);
      }
      expect(rawSetBytes([{ width: 37, height: 23 }], geometryOf(book), auto.length)).toBe(written.length);
    });
  }

  it('follows the FORMAT.md layouts worked by hand for a 40 × 24 image of 4 × 4 blocks (B = 10 × 6 = 60)', () => {
    // Full search, K = 20: version 1, b = ceil(log2 20) = 5; 68 + ceil(60·5/8) = 68 + 38 = 106.
    expect(rawContainerBytes(40, 24, geometryOf(structureBook({ ...CASES[0] })))).toBe(106);
    // Balanced tree of depth 3 (15 nodes): version 3, 3 bits a block; 72 + ceil(60·3/8) = 72 + 23 = 95 (the old count,
    // ceil(log2 15) = 4 bits behind a 68-byte header, gave 68 + 30 = 98).
    expect(rawContainerBytes(40, 24, geometryOf(structureBook({ ...CASES[2] })))).toBe(95);
    // Residual 4 + 3 + 2 (28 codewords): 9 bits a block; 72 + ceil(60·9/8) = 72 + 68 = 140 (not ceil(log2 28) = 5 bits).
    expect(rawContainerBytes(40, 24, geometryOf(structureBook({ ...CASES[4] })))).toBe(140);
    // Entropy-constrained, 4 × 4 luma, lengths 1, 2, 3, 3; every block coded with codeword 2 (3 bits): a 4-byte
    // length, then ceil(60·3/8) = 23 bytes: 72 + 4 + 23 = 99.
    const ecvq = structureBook({ color: 'luma', w: 4, h: 4, meanBits: 0, size: 4, structure: { kind: 'entropy-constrained', lambda: 1, codeLengths: Uint8Array.from([1, 2, 3, 3]) } });
    expect(rawContainerBytes(40, 24, geometryOf(ecvq), { indices: new Uint32Array(60).fill(2) })).toBe(99);
    // The unbalanced comb of depth 6 with 4-bit means, 3 × 2 blocks on 12 × 4 pixels: B = 4 × 2 = 8. Node 2 is the
    // leaf at depth 1, node 12 one at depth 6: four of each, 4·1 + 4·6 = 28 bits → 4 bytes; means ceil(8·4/8) = 4;
    // 72 + 4 + 4 + 4 = 84.
    const comb = structureBook({ ...CASES[3] });
    expect(rawContainerBytes(12, 4, geometryOf(comb), { indices: Uint32Array.from([2, 12, 2, 12, 2, 12, 2, 12]) })).toBe(84);
  });

  it('is the rate the API reports for a structured codebook’s held-out image', () => {
    // The service's per-image and per-set raw figures read the same definition, with the codebook's structure.
    const book = structureBook({ ...CASES[4] });
    const written = writeContainer(book, encodedFor(book, 37, 23, 5), { payload: 'raw' });
    // The evaluation recorded the `auto` container (here smaller than raw: fixed-length layouts may be packed).
    const metrics = { imageId: 1, mse: 1, psnr: 40, ssim: 0.9, bppFixed: 0, bppEntropy: 0, bppActual: 0, containerBytes: 1 };
    const row = toImageMetrics(metrics, { fileName: 'a.png', width: 37, height: 23 }, geometryOf(book));
    expect(row.rawBytes).toBe(written.length);
    expect(bppRawOf(geometryOf(book), [{ width: 37, height: 23 }], 1)).toBeCloseTo((written.length * 8) / (37 * 23), 12);
  });
});
