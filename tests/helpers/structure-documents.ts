// Small hand-made structured codebook documents (4×4 luma blocks) for API and browser tests: a tree that is not
// balanced and a two-stage residual codebook, each importable through POST …/codebooks/import.
import { makeCodebook, toCodebookDocument, type CodebookStructure } from '../../server/engine';

const D = 16;
const training = { source: 'hand-made', vectorCount: 14, init: 'split' as const, epsilon: 0.001, seed: 1, iterations: 1, distortion: 10, trace: [] };

/** A 4×4 block: a level plus `slope` per column (a horizontal ramp) and `tilt` per row. */
function block(level: number, slope = 0, tilt = 0): number[] {
  const out: number[] = [];
  for (let r = 0; r < 4; r++) for (let c = 0; c < 4; c++) out.push(level + slope * (c - 1.5) + tilt * (r - 1.5));
  return out;
}

function document(blocks: number[][], usage: number[], structure: CodebookStructure) {
  return toCodebookDocument(
    makeCodebook({
      size: blocks.length,
      dimension: D,
      patch: { width: 4, height: 4, channels: 1, color: 'luma' },
      preprocessing: { kind: 'none' },
      codewords: Float32Array.from(blocks.flat()),
      usage: Uint32Array.from(usage),
      training,
      structure,
    }),
  );
}

/**
 * An unbalanced tree of 5 nodes: root 0 → 1 (dark), 2 (light, a leaf at level 1); node 1 → 3, 4 (leaves at level 2).
 * Usage per node is the vectors that reach it (14 at the root: 9 left, 5 right; 4 + 5 below node 1).
 */
export function treeCodebookDocument() {
  const blocks = [block(128), block(70, 4), block(190, -3), block(40, 6), block(100, 2, 3)];
  return document(blocks, [14, 9, 5, 4, 5], { kind: 'tree', balanced: false, children: Int32Array.from([1, 2, 3, 4, -1, -1, -1, -1, -1, -1]) });
}

/** Two stages: 2 levels (1 bit), then 4 signed ramps of ±12 around zero (2 bits); table rows 0–1 and 2–5. */
export function residualCodebookDocument() {
  const blocks = [block(80), block(170), block(0, 8), block(0, -8), block(0, 0, 8), block(0, 0, -8)];
  return document(blocks, [8, 6, 4, 3, 4, 3], { kind: 'residual', bits: [1, 2], search: { kind: 'greedy' } });
}
