import type { CodebookDetail } from '../../../server/contracts';

/** Mean squared error per component inside each cell: the cell's total squared error over its vectors and components. */
export function cellMse(codebook: Pick<CodebookDetail, 'cellDistortion' | 'usage' | 'dimension'>): number[] | null {
  if (!codebook.cellDistortion) return null;
  return codebook.cellDistortion.map((total, i) => (codebook.usage[i] > 0 ? total / (codebook.usage[i] * codebook.dimension) : 0));
}

/**
 * Training vectors over the cells that split them once (`rows`: a tree's leaves, a residual codebook's first stage;
 * null for every row), those cells' count, and how many of them no vector fell into.
 */
export function usageSummary(usage: readonly number[], rows: readonly number[] | null = null): { total: number; cells: number; unused: number } {
  const counted = rows ? rows.map((r) => usage[r]) : usage;
  return { total: counted.reduce((a, b) => a + b, 0), cells: counted.length, unused: counted.filter((u) => u === 0).length };
}

/** A cell's share of the training vectors in percent (0 when there were none). */
export function usagePercent(usage: readonly number[], cell: number, total: number): number {
  return total > 0 ? (usage[cell] / total) * 100 : 0;
}

/** The mean of a codeword's components (its brightness, for luma; the mean over channels for colour). */
export function codewordMean(codeword: readonly number[]): number {
  return codeword.length === 0 ? 0 : codeword.reduce((a, b) => a + b, 0) / codeword.length;
}

/** What the cells of the usage summary are, after their count ("of 9 leaves"); nothing for a flat table. */
export function cellsNote(codebook: Pick<CodebookDetail, 'structure'>): string {
  if (codebook.structure === 'tree') return ' leaves';
  if (codebook.structure === 'residual') return ' first-stage cells';
  return '';
}
