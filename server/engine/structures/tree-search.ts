// Fast exact descent of a tree-structured codebook: one hyperplane test per internal node instead of two distances,
// deciding exactly as the plain descent (two float64 distances, left on ties) does. See `descend` for the argument.
import { kernelDescendTree } from '../wasm/structure-kernels';
import type { TreeStructure } from './types';

/**
 * Per internal node, the test that replaces its two distances, in typed arrays laid out in breadth-first order (the
 * table's order, so level by level): for node n with children l, r,
 *   w = c_r − c_l (float64, d values), θ = (‖c_r‖² − ‖c_l‖²) / 2, and ‖x − c_l‖² − ‖x − c_r‖² = 2(x·w − θ).
 */
export interface TreeSearchPlan {
  d: number;
  /** nodes × 2: children as in TreeStructure (−1 for a leaf). */
  children: Int32Array;
  /** nodes × d: w of each internal node (zeros for a leaf). */
  normals: Float64Array;
  /** nodes: θ of each internal node. */
  thresholds: Float64Array;
  /** nodes: an upper bound on max(‖c_l‖, ‖c_r‖) of each internal node. */
  radii: Float64Array;
  /** Relative rounding allowance: the margin within which a node is re-decided, per (‖x‖ + radius)². */
  slack: number;
}

/** 2^-53, the unit roundoff of float64. */
const U = 2 ** -53;
/** Upward nudge for norms computed in float64 (each a handful of roundings of relative size U), so they bound from above. */
const UP = 1 + 1e-12;

/**
 * Builds the per-node tests of a tree (codewords: nodes × d, row-major; the structure already checked).
 *
 * Why a margin of slack·(‖x‖ + R)² suffices (R = max(‖c_l‖, ‖c_r‖); standard floating-point error analysis, as in
 * Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., §3.1, recursive summation and inner products,
 * with γ_k = k·u/(1 − k·u)): the plain descent computes D_l, D_r as float64 sums of d exact squares (exactDistance:
 * differences and squares of float32 values are exact in float64), so |D̂ − D| ≤ γ_d·D ≤ γ_d·(‖x‖ + R)² for each.
 * The fast test computes s = x·w with |ŝ − x·w| ≤ γ_d·‖x‖‖w‖ ≤ 2γ_d·‖x‖R (w's components are exact differences),
 * θ with error ≤ γ_{d+1}·R², and m = ŝ − θ̂ with one more rounding of relative size u on a value ≤ 2(‖x‖ + R)².
 * So |2m̂ − (D̂_l − D̂_r)| ≤ (2γ_d + 2γ_{d+1} + 4u + 2γ_d)·(‖x‖ + R)² < 8(d + 2)·u·(‖x‖ + R)² for d·u ≪ 1;
 * slack is twice that. Outside the margin the sign of m̂ is the sign of D̂_l − D̂_r; inside it (near-ties, rare)
 * the node is decided by the plain two-distance comparison itself.
 */
export function treeSearchPlan(codewords: Float32Array, structure: TreeStructure, d: number): TreeSearchPlan {
  const { children } = structure;
  const nodes = children.length / 2;
  const normals = new Float64Array(nodes * d);
  const thresholds = new Float64Array(nodes);
  const radii = new Float64Array(nodes);
  for (let t = 0; t < nodes; t++) {
    const l = children[2 * t];
    if (l < 0) continue;
    const r = children[2 * t + 1];
    let nl = 0;
    let nr = 0;
    for (let i = 0; i < d; i++) {
      const a = codewords[l * d + i];
      const b = codewords[r * d + i];
      normals[t * d + i] = b - a;
      nl += a * a;
      nr += b * b;
    }
    thresholds[t] = (nr - nl) / 2;
    radii[t] = Math.sqrt(Math.max(nl, nr)) * UP;
  }
  return { d, children, normals, thresholds, radii, slack: 16 * (d + 2) * U * UP };
}

export interface TreeDescent {
  /** N: the path bits, first branch most significant. */
  paths: Uint32Array;
  /** N: path lengths, bits. */
  lengths: Uint8Array;
  /** N: the leaf reached (node index). */
  leaves: Uint32Array;
  /** N: exactDistance of each vector to its leaf's codeword. */
  distances: Float64Array;
  /** Node decisions that fell inside the margin and were re-decided by the two distances. */
  redecided: number;
}

/**
 * Descends every vector (N × d, row-major) from the root: at each internal node right when x·w − θ is above the margin,
 * left when below it, and inside it right exactly when the plain descent goes right (‖x − c_r‖² < ‖x − c_l‖² by
 * exactDistance; left on ties). The same leaf as the plain descent for every vector, in d multiply-adds a level
 * instead of 2·d subtract-multiply-adds; the leaf's distance is exactDistance, the bits the plain descent reports.
 * The loop runs in the engine's WebAssembly module (float64 SIMD, the same float64 operations: wasm/structure-kernels.ts).
 */
export function descendTree(plan: TreeSearchPlan, codewords: Float32Array, vectors: Float32Array): TreeDescent {
  const { leaves, paths, lengths, distances, redecided } = kernelDescendTree({ ...plan, up: UP }, codewords, vectors);
  return { paths, lengths, leaves, distances, redecided };
}
