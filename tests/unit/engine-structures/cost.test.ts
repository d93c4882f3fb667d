import { describe, expect, it } from 'vitest';
import { codebookCost, structureCost } from '../../../server/engine/structures/index';

// Hand-worked figures for d = 16 (a 4 × 4 luma block).
describe('structure cost summary', () => {
  it('counts K·d multiply-adds and ⌈log2 K⌉ bits for full search', () => {
    expect(structureCost({ kind: 'full', size: 256 }, 16)).toEqual({
      tableCodewords: 256, decoderCodewords: 256, encodeMultiplyAdds: 4096, decodeAdds: 0, maxIndexBits: 8, fixedRate: true,
    });
    expect(structureCost({ kind: 'full', size: 1 }, 16).maxIndexBits).toBe(0);
  });

  it('counts two distances per level for a tree and stores every node', () => {
    // Depth 8: 8 levels × 2 children × 16 = 256 multiply-adds against 4096 for full search; 511 nodes, 256 leaves.
    expect(structureCost({ kind: 'tree', leaves: 256, depth: 8 }, 16)).toEqual({
      tableCodewords: 511, decoderCodewords: 256, encodeMultiplyAdds: 256, decodeAdds: 0, maxIndexBits: 8, fixedRate: true,
    });
    expect(structureCost({ kind: 'tree', leaves: 100, depth: 12 }, 16).fixedRate).toBe(false);
  });

  it('counts Σ 2^b_s codewords and M candidates per stage for residual search', () => {
    // Two stages of 4 bits: table 16 + 16 (against 256 for full search at 8 bits).
    expect(structureCost({ kind: 'residual', bits: [4, 4], m: 1 }, 16)).toEqual({
      tableCodewords: 32, decoderCodewords: 32, encodeMultiplyAdds: 512, decodeAdds: 16, maxIndexBits: 8, fixedRate: true,
    });
    // M = 8: stage 0 from one candidate (16·16), stage 1 from 8 (8·16·16).
    expect(structureCost({ kind: 'residual', bits: [4, 4], m: 8 }, 16).encodeMultiplyAdds).toBe(256 + 2048);
    // M larger than the partial sums that exist: only 2 after a 1-bit stage.
    expect(structureCost({ kind: 'residual', bits: [1, 3], m: 8 }, 1).encodeMultiplyAdds).toBe(2 + 2 * 8);
  });

  it('reads a trained codebook’s structure: tree depth and leaves, longest Huffman code', () => {
    // Root with a leaf on the left and a two-leaf subtree on the right: 3 leaves, depth 2.
    const tree = codebookCost({ kind: 'tree', balanced: false, children: new Int32Array([1, 2, -1, -1, 3, 4, -1, -1, -1, -1]) }, 5, 4);
    expect(tree).toMatchObject({ tableCodewords: 5, decoderCodewords: 3, encodeMultiplyAdds: 16, maxIndexBits: 2, fixedRate: false });
    const ecvq = codebookCost({ kind: 'entropy-constrained', lambda: 0.1, codeLengths: new Uint8Array([1, 2, 3, 3]) }, 4, 16);
    expect(ecvq).toMatchObject({ tableCodewords: 4, encodeMultiplyAdds: 64, maxIndexBits: 3, fixedRate: false });
    expect(codebookCost({ kind: 'residual', bits: [2, 2], search: { kind: 'm-best', m: 2 } }, 8, 1).encodeMultiplyAdds).toBe(4 + 2 * 4);
  });
});
