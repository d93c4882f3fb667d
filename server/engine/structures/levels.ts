// How a structured codebook's table reads level by level (tree) or stage by stage (residual): what the atlas shows and
// what the viewer's partial reconstructions descend to. Pure arithmetic over the structure; no search.
import type { CodebookStructure, ResidualStructure, TreeStructure } from './types';

export interface TreeLevels {
  /** nodes: each node's depth (the root is 0). */
  depth: Uint8Array;
  /** nodes: each node's parent, −1 for the root. */
  parent: Int32Array;
  /** Level L (0..longest path): its nodes in table (breadth-first) order. */
  levels: number[][];
}

/**
 * Depth, parent and the nodes of every level of a tree whose table is in breadth-first order (children after their
 * parent, the contract of TreeStructure), so one pass in table order sees every parent before its children.
 */
export function treeLevels(structure: TreeStructure): TreeLevels {
  const nodes = structure.children.length / 2;
  const depth = new Uint8Array(nodes);
  const parent = new Int32Array(nodes).fill(-1);
  const levels: number[][] = [];
  for (let n = 0; n < nodes; n++) {
    (levels[depth[n]] ??= []).push(n);
    for (const child of [structure.children[2 * n], structure.children[2 * n + 1]]) {
      if (child < 0) continue;
      parent[child] = n;
      depth[child] = depth[n] + 1;
    }
  }
  return { depth, parent, levels };
}

/**
 * For every node, the node a descent through it stands at after `level` branches: its ancestor at that depth, or
 * the node itself when it lies no deeper. Descent is greedy, so stopping it at `level` lands on exactly this
 * ancestor of the leaf the full descent reaches.
 * @returns nodes
 */
export function ancestorsAtLevel(tree: TreeLevels, level: number): Int32Array {
  const nodes = tree.depth.length;
  const out = new Int32Array(nodes);
  for (let n = 0; n < nodes; n++) {
    // Parents come first in table order, so a deeper node's answer is its parent's.
    out[n] = tree.depth[n] <= level ? n : out[tree.parent[n]];
  }
  return out;
}

export interface ResidualStageTable {
  stage: number;
  bits: number;
  /** The stage's first codeword in the table and its count (2^bits). */
  first: number;
  count: number;
  /** Largest |component| of the stage's codewords (0..255 scale): what a signed tile's full swing stands for. */
  maxAbs: number;
}

/** Where each stage sits in the table (codewords Σ 2^bits[s] × d) and how far its components reach from zero. */
export function residualStageTables(codewords: Float32Array, structure: ResidualStructure, d: number): ResidualStageTable[] {
  const out: ResidualStageTable[] = [];
  let first = 0;
  structure.bits.forEach((bits, stage) => {
    const count = 2 ** bits;
    let maxAbs = 0;
    for (let i = first * d, end = (first + count) * d; i < end; i++) maxAbs = Math.max(maxAbs, Math.abs(codewords[i]));
    out.push({ stage, bits, first, count, maxAbs });
    first += count;
  });
  return out;
}

/**
 * The table rows whose cells split the training vectors once: a tree's leaves (a node's usage counts every vector that
 * passes through it, so summing all nodes counts a vector at each level), a residual codebook's first stage (each
 * stage sees every vector). Null for flat tables, where every row is such a cell.
 */
export function partitionRows(structure: CodebookStructure): number[] | null {
  if (structure.kind === 'tree') {
    const rows: number[] = [];
    for (let n = 0; n < structure.children.length / 2; n++) {
      if (structure.children[2 * n] < 0 && structure.children[2 * n + 1] < 0) rows.push(n);
    }
    return rows;
  }
  if (structure.kind === 'residual') return Array.from({ length: 2 ** structure.bits[0] }, (_, i) => i);
  return null;
}
