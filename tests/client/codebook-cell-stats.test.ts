import { describe, expect, it } from 'vitest';
import { cellMse, codewordMean, usagePercent, usageSummary } from '../../src/features/codebooks/cell-stats';

describe('codebook cell figures', () => {
  it('divides each cell’s squared error by its vectors and components, and gives an empty cell 0', () => {
    expect(cellMse({ cellDistortion: [40, 0, 9], usage: [5, 0, 3], dimension: 4 })).toEqual([2, 0, 0.75]);
  });

  it('has no per-cell MSE for a codebook without cell distortion (imported)', () => {
    expect(cellMse({ cellDistortion: null, usage: [1, 2], dimension: 4 })).toBeNull();
  });

  it('counts the vectors and the unused cells', () => {
    expect(usageSummary([3, 0, 5, 0])).toEqual({ total: 8, cells: 4, unused: 2 });
  });

  it('counts a tree’s vectors once, over its leaves, not at every node they pass', () => {
    // Root 0 (10 vectors) → nodes 1 (7) and 2 (3); node 1 → leaves 3 (7) and 4 (0); node 2 is a leaf.
    expect(usageSummary([10, 7, 3, 7, 0], [2, 3, 4])).toEqual({ total: 10, cells: 3, unused: 1 });
  });

  it('gives a cell’s share of the vectors in percent, and 0 when there were none', () => {
    expect(usagePercent([1, 3], 1, 4)).toBe(75);
    expect(usagePercent([0, 0], 0, 0)).toBe(0);
  });

  it('averages a codeword’s components', () => {
    expect(codewordMean([10, 20, 30, 40])).toBe(25);
  });
});
