import { describe, expect, it } from 'vitest';
import { codebookCost, structureCost } from '../../../server/engine/structures/index';

// Hand-worked figures for d = 16 (a 4 × 4 luma block).
describe('structure cost summary', () => {
  it('counts K·d multiply-adds and ⌈log2 K⌉ bits for full search', () => {
    expect(structureCost({ kind: 'full', size: 256 }, 16)).toEqual({
      // 256 distances of 16 components = 4096 multiply-adds; the least of 256 distances takes 255 comparisons; the
      // decoder reads row `index` of the table, no arithmetic and no comparison.
      tableCodewords: 256, decoderCodewords: 256, encodeMultiplyAdds: 4096, encodeComparisons: 255, decodeAdds: 0, decodeComparisons: 0, maxIndexBits: 8, fixedRate: true,
    });
    expect(structureCost({ kind: 'full', size: 1 }, 16)).toMatchObject({ maxIndexBits: 0, encodeComparisons: 0 });
  });

  it('counts two distances per level for a tree and stores every node', () => {
    // Depth 8: 8 levels × 2 children × 16 = 256 multiply-adds against 4096 for full search; 511 nodes, 256 leaves.
    // One comparison a level (which child is nearer): 8. The decoder tests each node on the path for a leaf: the 8
    // internal ones and the leaf itself, 9.
    expect(structureCost({ kind: 'tree', leaves: 256, depth: 8 }, 16)).toEqual({
      tableCodewords: 511, decoderCodewords: 256, encodeMultiplyAdds: 256, encodeComparisons: 8, decodeAdds: 0, decodeComparisons: 9, maxIndexBits: 8, fixedRate: true,
    });
    expect(structureCost({ kind: 'tree', leaves: 100, depth: 12 }, 16).fixedRate).toBe(false);
  });

  it('counts Σ 2^b_s codewords and M candidates per stage for residual search', () => {
    // Two stages of 4 bits: table 16 + 16 (against 256 for full search at 8 bits).
    // Greedy: each stage the least of 16 distances, 15 + 15 = 30 comparisons; the decoder adds the second stage's
    // 16 components to the first's and compares nothing.
    expect(structureCost({ kind: 'residual', bits: [4, 4], m: 1 }, 16)).toEqual({
      tableCodewords: 32, decoderCodewords: 32, encodeMultiplyAdds: 512, encodeComparisons: 30, decodeAdds: 16, decodeComparisons: 0, maxIndexBits: 8, fixedRate: true,
    });
    // M = 8: stage 0 from one candidate (16·16), stage 1 from 8 (8·16·16).
    expect(structureCost({ kind: 'residual', bits: [4, 4], m: 8 }, 16).encodeMultiplyAdds).toBe(256 + 2048);
    // Comparisons keeping the 8 best by insertion: stage 0 has 16 candidates; candidate i < 8 takes i comparisons
    // (0 + 1 + … + 7 = 28), each of the other 8 takes 8 (one against the worst kept, 7 to find its place): 28 + 64 =
    // 92. Stage 1 has 8 · 16 = 128 candidates: 28 + 120 · 8 = 988. Total 1080.
    expect(structureCost({ kind: 'residual', bits: [4, 4], m: 8 }, 16).encodeComparisons).toBe(92 + 988);
    // M larger than the partial sums that exist: only 2 after a 1-bit stage.
    expect(structureCost({ kind: 'residual', bits: [1, 3], m: 8 }, 1).encodeMultiplyAdds).toBe(2 + 2 * 8);
  });

  it('reads a trained codebook’s structure: tree depth and leaves, longest Huffman code', () => {
    // Root with a leaf on the left and a two-leaf subtree on the right: 3 leaves, depth 2.
    const tree = codebookCost({ kind: 'tree', balanced: false, children: new Int32Array([1, 2, -1, -1, 3, 4, -1, -1, -1, -1]) }, 5, 4);
    expect(tree).toMatchObject({ tableCodewords: 5, decoderCodewords: 3, encodeMultiplyAdds: 16, maxIndexBits: 2, fixedRate: false });
    const ecvq = codebookCost({ kind: 'entropy-constrained', lambda: 0.1, codeLengths: new Uint8Array([1, 2, 3, 3]) }, 4, 16);
    // ECVQ: the least of 4 costs, 3 comparisons; the decoder reads the code bit by bit and asks after each bit whether
    // it is a code of that length: at most the longest code, 3.
    expect(ecvq).toMatchObject({ tableCodewords: 4, encodeMultiplyAdds: 64, encodeComparisons: 3, decodeComparisons: 3, maxIndexBits: 3, fixedRate: false });
    // The unbalanced tree: 2 levels at most, so 2 comparisons encoding, 3 leaf tests decoding (root, node 2, leaf).
    expect(tree).toMatchObject({ encodeComparisons: 2, decodeComparisons: 3, decodeAdds: 0 });
    expect(codebookCost({ kind: 'residual', bits: [2, 2], search: { kind: 'm-best', m: 2 } }, 8, 1).encodeMultiplyAdds).toBe(4 + 2 * 4);
  });
});
