/**
 * Cross-field rules of a codebook's structure (the JSON format's `structure` member; structures/types.ts): what a
 * zod shape alone cannot say. One function per kind, each returning every problem with its path under `structure`.
 */
import { MAX_CODE_LENGTH } from '../core/huffman';
import { MAX_TREE_DEPTH } from './limits';

export interface StructureProblem {
  path: (string | number)[];
  message: string;
}

type StructureJson =
  | { kind: 'full' }
  | { kind: 'entropy-constrained'; lambda: number; codeLengths: ArrayLike<number> }
  | { kind: 'tree'; balanced: boolean; children: ArrayLike<number> }
  | { kind: 'residual'; bits: readonly number[] };

/**
 * Kraft's inequality in integers, Σ 2^(16 − l) ≤ 2^16 (Cover & Thomas, Elements of Information Theory, Thm 5.2.1):
 * the lengths of any prefix code satisfy it, and every set that does has a prefix (canonical) code.
 */
function huffmanProblems(codeLengths: ArrayLike<number>, size: number): StructureProblem[] {
  if (codeLengths.length !== size) return [{ path: ['codeLengths'], message: `expected ${size} code lengths (one per codeword), got ${codeLengths.length}` }];
  let kraft = 0;
  for (let j = 0; j < size; j += 1) kraft += 2 ** (MAX_CODE_LENGTH - codeLengths[j]);
  if (kraft > 2 ** MAX_CODE_LENGTH) return [{ path: ['codeLengths'], message: `the lengths over-subscribe the code space (Σ 2^−l = ${kraft / 2 ** MAX_CODE_LENGTH} > 1, Kraft's inequality): no prefix code has them` }];
  return [];
}

/** Depth of each node of a checked tree, its leaves in table order, and the longest path. */
export interface TreeShape {
  depth: Uint8Array; // per node
  leaves: number[];
  maxDepth: number;
  balanced: boolean;
}

/**
 * Checks that `children` (2 per node, −1 for none) forms a proper binary tree over nodes 0..size−1 in breadth-first
 * order: node 0 the root, each internal node with two children, each other node some node's child exactly once, and
 * a breadth-first walk (left before right) meets the nodes as 0, 1, 2, …
 * @returns the shape, or the first problem found
 */
export function treeShape(children: ArrayLike<number>, size: number): TreeShape | StructureProblem {
  if (children.length !== 2 * size) return { path: ['children'], message: `expected ${2 * size} entries (two per node), got ${children.length}` };
  const depth = new Uint8Array(size);
  const leaves: number[] = [];
  let next = 1;
  let maxDepth = 0;
  for (let n = 0; n < size; n += 1) {
    if (n >= next) return { path: ['children'], message: `node ${n} is no node's child (the tree covers nodes 0..${next - 1})` };
    const [l, r] = [children[2 * n], children[2 * n + 1]];
    if (l === -1 && r === -1) {
      leaves.push(n);
      continue;
    }
    if (l === -1 || r === -1) return { path: ['children', 2 * n + (l === -1 ? 0 : 1)], message: `node ${n} has one child; a node has two or none` };
    // Breadth-first order: the next unnamed nodes, left then right.
    if (l !== next || r !== next + 1) return { path: ['children', 2 * n], message: `node ${n}'s children are ${l} and ${r}; breadth-first order makes them ${next} and ${next + 1}` };
    if (r >= size) return { path: ['children', 2 * n + 1], message: `node ${n}'s child ${r} is beyond the table of ${size}` };
    depth[l] = depth[r] = depth[n] + 1;
    if (depth[n] + 1 > MAX_TREE_DEPTH) return { path: ['children', 2 * n], message: `the tree is deeper than ${MAX_TREE_DEPTH} levels` };
    maxDepth = Math.max(maxDepth, depth[n] + 1);
    next += 2;
  }
  const balanced = leaves.every((n) => depth[n] === maxDepth);
  return { depth, leaves, maxDepth, balanced };
}

export const isTreeProblem = (s: TreeShape | StructureProblem): s is StructureProblem => 'message' in s;

function treeProblems(children: ArrayLike<number>, balanced: boolean, size: number): StructureProblem[] {
  const shape = treeShape(children, size);
  if (isTreeProblem(shape)) return [shape];
  if (shape.balanced !== balanced) {
    return [{ path: ['balanced'], message: balanced ? `the leaves lie at depths other than ${shape.maxDepth}, so the tree is not balanced` : `every leaf is at depth ${shape.maxDepth}: the tree is balanced` }];
  }
  return [];
}

/** The table offset of each stage's first codeword (stage 0 first), and the table size the stages need. */
export function stageOffsets(bits: readonly number[]): { offsets: number[]; total: number } {
  const offsets: number[] = [];
  let total = 0;
  for (const b of bits) {
    offsets.push(total);
    total += 2 ** b;
  }
  return { offsets, total };
}

function residualProblems(bits: readonly number[], size: number): StructureProblem[] {
  const { total } = stageOffsets(bits);
  if (total !== size) return [{ path: ['bits'], message: `stages of ${bits.map((b) => `2^${b}`).join(' + ')} = ${total} codewords; the table holds ${size}` }];
  return [];
}

/** Every problem of a structure against a table of `size` codewords (none: it is valid). */
export function structureProblems(structure: StructureJson, size: number): StructureProblem[] {
  switch (structure.kind) {
    case 'full':
      return [];
    case 'entropy-constrained':
      return huffmanProblems(structure.codeLengths, size);
    case 'tree':
      return treeProblems(structure.children, structure.balanced, size);
    case 'residual':
      return residualProblems(structure.bits, size);
  }
}
