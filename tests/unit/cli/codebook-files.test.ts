import { describe, expect, it } from 'vitest';
import { codebookFileName } from '../../../server/cli/codebook-files';
import { makeCodebook, type CodebookStructure } from '../../../server/engine';

// Kept codebooks (`sweep --out-dir`, `train --keep-sizes`) are named by their configuration; a λ sweep trains codebooks
// that share a patch and a table size, so the structure must be part of the name or the files would collide.
function book(size: number, structure?: CodebookStructure) {
  const d = 4;
  const codewords = Float32Array.from({ length: size * d }, (_, i) => (i * 7) % 251);
  return makeCodebook({
    size, dimension: d, patch: { width: 2, height: 2, channels: 1, color: 'luma' }, preprocessing: { kind: 'none' }, codewords,
    usage: new Uint32Array(size).fill(1), structure,
    training: { source: 'test', vectorCount: size, init: 'split', epsilon: 0, seed: 1, iterations: 0, distortion: 0, trace: [] },
  });
}

describe('the name of a kept codebook file', () => {
  it('names a full-search codebook by patch, colour and index bits', () => {
    expect(codebookFileName(book(8))).toBe('2x2-luma-b3.json');
  });

  it('tells apart the entropy-constrained codebooks of one λ sweep by their λ', () => {
    const lengths = (n: number) => Uint8Array.from({ length: n }, (_, i) => (i < n - 1 ? i + 1 : n - 1)); // a complete prefix code
    const a = codebookFileName(book(4, { kind: 'entropy-constrained', lambda: 50, codeLengths: lengths(4) }));
    const b = codebookFileName(book(4, { kind: 'entropy-constrained', lambda: 200, codeLengths: lengths(4) }));
    expect([a, b]).toEqual(['2x2-luma-ecvq-l50-b2.json', '2x2-luma-ecvq-l200-b2.json']);
  });

  it('names a residual codebook by its stage bits and their sum', () => {
    expect(codebookFileName(book(12, { kind: 'residual', bits: [3, 2], search: { kind: 'greedy' } }))).toBe('2x2-luma-res3+2-b5.json');
  });

  it('names a balanced tree by its depth, not by its table of every node', () => {
    // 7 nodes: root 0, children 1 and 2, leaves 3..6 (breadth-first, structures/types.ts).
    const children = Int32Array.from([1, 2, 3, 4, 5, 6, -1, -1, -1, -1, -1, -1, -1, -1]);
    expect(codebookFileName(book(7, { kind: 'tree', balanced: true, children }))).toBe('2x2-luma-tree-b2.json');
  });
});
