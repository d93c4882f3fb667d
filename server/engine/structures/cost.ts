// What each codebook structure costs a device, in one place: the run form's live summary, the codebook pages and the
// bench all read these figures. Counts are per block of d components (a block is d pixels in luma, d / 3 in colour).
import { EngineError } from '../core/errors';
import type { CodebookStructure } from './types';

/**
 * A structure as planned before training (the run form) or as trained:
 * - full: `size` codewords searched in full;
 * - entropy-constrained: at most `size` codewords searched in full, codes of at most `maxCodeLength` bits;
 * - tree: `leaves` leaves, longest path `depth` bits (balanced when leaves = 2^depth);
 * - residual: stages of 2^bits[s] codewords, searched keeping `m` candidates per stage (1 = greedy).
 */
export type StructurePlan =
  | { kind: 'full'; size: number }
  | { kind: 'entropy-constrained'; size: number; maxCodeLength: number }
  | { kind: 'tree'; leaves: number; depth: number }
  | { kind: 'residual'; bits: readonly number[]; m: number };

export interface StructureCost {
  /** Codewords the table stores (a tree stores every node: the encoder compares internal nodes). */
  tableCodewords: number;
  /** Codewords the decoder reads blocks from (a tree's leaves; otherwise the whole table). */
  decoderCodewords: number;
  /**
   * Encoder multiply-adds per block, worst case: one per component of every squared distance it evaluates (ECVQ's K
   * additions of a precomputed λ·length are not counted; comparisons are, below). Full search and ECVQ: K·d. Tree:
   * 2·d per level (both children's distances; a hyperplane test would need d + 1). Residual: d·Σ_s (candidates kept
   * after stage s−1) · 2^{b_s}, one candidate before stage 0 and min(M, product of the earlier stage sizes) after.
   */
  encodeMultiplyAdds: number;
  /**
   * Encoder comparisons per block, worst case: those that pick the nearest (or cheapest) candidate. Full search and
   * ECVQ: K − 1 (the least of K distances, or of K costs distance + λ·length). Tree: one per level (which child is
   * nearer). Residual: per stage, keeping the M best of n candidates by insertion into a sorted list: candidate i
   * (from 0) takes i comparisons while fewer than M are kept, then M (one against the worst kept, M − 1 to find its
   * place), so L(L − 1)/2 + (n − L)·M with L = min(M, n); greedy search (M = 1) is 2^{b_s} − 1 a stage.
   */
  encodeComparisons: number;
  /** Decoder additions per block: a residual block sums S codewords, (S − 1)·d additions; a table look-up needs none. */
  decodeAdds: number;
  /**
   * Decoder comparisons per block, worst case, to turn the index bits into a table row (the reference decoder's,
   * server/engine/firmware/c-sources.ts): none for a fixed-length index (full search, residual stages), one per bit
   * read for a canonical Huffman code (after l bits, is the code among those of length l: the longest code's length),
   * one leaf test per node on a tree path (depth + 1, the last one finding the leaf).
   */
  decodeComparisons: number;
  /** Longest index of a block, bits (fixed-rate structures: the rate itself). */
  maxIndexBits: number;
  /** Whether every block's index has the same length. */
  fixedRate: boolean;
}

const ceilLog2 = (k: number) => (k <= 1 ? 0 : Math.ceil(Math.log2(k)));

/** Worst-case comparisons to keep the m least of n values by insertion into a sorted list (see encodeComparisons). */
function keepBestComparisons(n: number, m: number): number {
  const l = Math.min(m, n);
  return (l * (l - 1)) / 2 + (n - l) * m;
}

/** The cost of a planned structure with blocks of d components. */
export function structureCost(plan: StructurePlan, d: number): StructureCost {
  switch (plan.kind) {
    case 'full':
      return {
        tableCodewords: plan.size, decoderCodewords: plan.size, encodeMultiplyAdds: plan.size * d, encodeComparisons: Math.max(0, plan.size - 1),
        decodeAdds: 0, decodeComparisons: 0, maxIndexBits: ceilLog2(plan.size), fixedRate: true,
      };
    case 'entropy-constrained': {
      const maxIndexBits = Math.min(plan.maxCodeLength, Math.max(1, plan.size - 1));
      return {
        tableCodewords: plan.size, decoderCodewords: plan.size, encodeMultiplyAdds: plan.size * d, encodeComparisons: Math.max(0, plan.size - 1),
        decodeAdds: 0, decodeComparisons: maxIndexBits, maxIndexBits, fixedRate: false,
      };
    }
    case 'tree':
      return {
        tableCodewords: 2 * plan.leaves - 1, decoderCodewords: plan.leaves, encodeMultiplyAdds: 2 * d * plan.depth, encodeComparisons: plan.depth,
        decodeAdds: 0, decodeComparisons: plan.depth + 1, maxIndexBits: plan.depth, fixedRate: plan.leaves === 2 ** plan.depth,
      };
    case 'residual': {
      let table = 0;
      let work = 0;
      let comparisons = 0;
      let reach = 1; // distinct partial sums before this stage
      for (const b of plan.bits) {
        const k = 2 ** b;
        const candidates = Math.min(plan.m, reach) * k;
        table += k;
        work += candidates * d;
        comparisons += keepBestComparisons(candidates, plan.m);
        reach *= k;
      }
      return {
        tableCodewords: table, decoderCodewords: table, encodeMultiplyAdds: work, encodeComparisons: comparisons,
        decodeAdds: (plan.bits.length - 1) * d, decodeComparisons: 0, maxIndexBits: plan.bits.reduce((a, b) => a + b, 0), fixedRate: true,
      };
    }
  }
}

/** The plan of a trained codebook: its structure and its table (codewords K × d). */
export function planOf(structure: CodebookStructure, tableCodewords: number): StructurePlan {
  switch (structure.kind) {
    case 'full':
      return { kind: 'full', size: tableCodewords };
    case 'entropy-constrained':
      return { kind: 'entropy-constrained', size: tableCodewords, maxCodeLength: Math.max(0, ...structure.codeLengths) };
    case 'tree': {
      const { children } = structure;
      const m = children.length / 2;
      const depth = new Int32Array(m);
      let longest = 0;
      let leaves = 0;
      for (let t = 0; t < m; t++) {
        if (children[2 * t] < 0) {
          leaves++;
          continue;
        }
        for (const c of [children[2 * t], children[2 * t + 1]]) {
          depth[c] = depth[t] + 1;
          longest = Math.max(longest, depth[c]);
        }
      }
      return { kind: 'tree', leaves, depth: longest };
    }
    case 'residual':
      return { kind: 'residual', bits: structure.bits, m: structure.search.kind === 'greedy' ? 1 : structure.search.m };
    default:
      throw new EngineError('ENGINE_INVALID_INPUT', 'unknown codebook structure', { kind: (structure as { kind: unknown }).kind });
  }
}

/** The cost of a trained codebook (table of K codewords of d components). */
export const codebookCost = (structure: CodebookStructure, tableCodewords: number, d: number): StructureCost =>
  structureCost(planOf(structure, tableCodewords), d);
