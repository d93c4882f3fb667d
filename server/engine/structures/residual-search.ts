// Fast exact stage search of a residual codebook (greedy and M-best): each candidate codeword is scored by one inner
// product (float64 SIMD in the engine's WebAssembly module) instead of a subtract-square per component, and only the
// candidates the rounding could still reorder are scored again the plain way, so the indices are those of the plain
// search bit for bit. See searchResidualStages.
import { exactDistance } from '../core/exact-distance';
import { StageScorer } from '../wasm/structure-kernels';

/** 2^-53, the unit roundoff of float64. */
const U = 2 ** -53;
/** Upward nudge for norms computed in float64, so they bound from above. */
const UP = 1 + 1e-12;

export interface ResidualStageCodes {
  /** S arrays of N: each block's index in every stage. */
  indices: Uint32Array[];
  /** N: exactDistance of each vector to its reconstruction (the stage sum in float64, rounded once to float32). */
  distances: Float64Array;
  /** Candidates scored the plain way, over all blocks and stages (a greedy search needs at least N·S). */
  rescored: number;
}

/**
 * Encodes vectors (N × d) stage by stage, keeping the M partial sums nearest the vector (M = 1: greedy). The plain rule,
 * which this reproduces exactly: candidate c (a float64 partial sum p_c) extended by codeword j of the stage scores
 *   ê = Σ_i ((x_i − p_ci) − w_ji)², in float64 in that order,
 * candidates arrive in (c, j) order, and the M lowest scores are kept, ties to the earlier arrival.
 *
 * The fast score is ‖r‖² + 2(‖w_j‖²/2 − r·w_j) with r = x − p_c rounded exactly as the plain rule rounds it; by the
 * standard error analysis of sums and inner products (Higham, "Accuracy and Stability of Numerical Algorithms", 2nd
 * ed., §3.1) both it and ê are within (d + 3)·u·(‖r‖ + ‖w_j‖)² of the exact ‖r − w_j‖² (u = 2^-53, to first order; the
 * plain subtraction r − w_j rounds once more than exactDistance's float32 differences do), so within G_c = slack·(‖r‖ + C)²
 * of each other, C bounding the stage's codeword norms and slack = 16(d + 3)·u, several times what the two errors need together.
 * Let T be the M-th smallest of (fast score + G_c). Any candidate whose fast score − G_c is above T has a plain score
 * strictly above M others' and is never kept; every other candidate is scored the plain way and offered to the plain
 * keep-M rule in arrival order, which then keeps what it keeps over all of them.
 */
export function searchResidualStages(codewords: Float32Array, bits: readonly number[], d: number, vectors: Float32Array, m: number): ResidualStageCodes {
  const n = vectors.length / d;
  const stages = bits.length;
  const sizes = bits.map((b) => 2 ** b);
  const offsets: number[] = [];
  let total = 0;
  for (const k of sizes) {
    offsets.push(total);
    total += k;
  }
  // Per codeword ‖w‖²/2, per stage an upper bound on ‖w‖.
  const halfNorms = new Float64Array(total);
  const stageRadius = new Float64Array(stages);
  for (let s = 0; s < stages; s++) {
    let most = 0;
    for (let j = offsets[s]; j < offsets[s] + sizes[s]; j++) {
      let q = 0;
      for (let i = 0; i < d; i++) q += codewords[j * d + i] * codewords[j * d + i];
      halfNorms[j] = q / 2;
      most = Math.max(most, q);
    }
    stageRadius[s] = Math.sqrt(most) * UP;
  }
  const slack = 16 * (d + 3) * U * UP;
  const widest = Math.max(...sizes);

  const indices = bits.map(() => new Uint32Array(n));
  const distances = new Float64Array(n);
  let partial = new Float64Array(m * d);
  let paths = new Uint32Array(m * stages);
  let nextPartial = new Float64Array(m * d);
  let nextPaths = new Uint32Array(m * stages);
  // r_c = x − p_c as the plain rule rounds it, ‖r_c‖², and the fast scores live in the WebAssembly module's memory.
  const scorer = new StageScorer(d, codewords, halfNorms, m, widest);
  // Greedy search runs whole in the module (the same rule, block by block); M-best keeps its bookkeeping here.
  if (m === 1) return scorer.greedy(vectors, offsets, sizes, stageRadius, slack, UP);
  const { rest, restNorms: restNorm, scores } = scorer;
  const band = new Float64Array(m); // G_c
  const uppers = new Float64Array(m); // the M smallest fast score + G_c, ascending
  const bestE = new Float64Array(m);
  const bestC = new Int32Array(m);
  const bestJ = new Int32Array(m);
  const recon = new Float32Array(d);
  let rescored = 0;
  // One function per block: it is optimised on its own, so the code around the loop never sends the loop back to the
  // interpreter (V8 deoptimised the single-function form at every call, which made it several times slower).
  const encodeBlock = (v: number) => {
    const o = v * d;
    partial.fill(0, 0, d);
    let count = 1;
    for (let s = 0; s < stages; s++) {
      const k = sizes[s];
      const base = offsets[s];
      let upperCount = 0;
      for (let c = 0; c < count; c++) {
        const ro = c * d;
        let rr = 0;
        for (let i = 0; i < d; i++) {
          const r = vectors[o + i] - partial[ro + i];
          rest[ro + i] = r;
          rr += r * r;
        }
        restNorm[c] = rr;
        const reach = Math.sqrt(rr) * UP + stageRadius[s];
        band[c] = slack * reach * reach;
      }
      // score = ‖r‖² + 2(‖w‖²/2 − r·w) for every candidate and codeword of the stage (inner products two lanes at a time).
      scorer.score(count, base, k);
      for (let c = 0; c < count; c++) {
        for (let j = 0; j < k; j++) {
          // Keep the M smallest upper bounds (sorted insertion; M is small).
          const up = scores[c * k + j] + band[c];
          if (upperCount === m && !(up < uppers[m - 1])) continue;
          let at = upperCount < m ? upperCount : m - 1;
          while (at > 0 && uppers[at - 1] > up) {
            uppers[at] = uppers[at - 1];
            at--;
          }
          uppers[at] = up;
          if (upperCount < m) upperCount++;
        }
      }
      const limit = uppers[upperCount - 1];
      let kept = 0;
      for (let c = 0; c < count; c++) {
        const ro = c * d;
        for (let j = 0; j < k; j++) {
          if (scores[c * k + j] - band[c] > limit) continue;
          rescored++;
          const wo = (base + j) * d;
          let e = 0;
          for (let i = 0; i < d; i++) {
            const t = rest[ro + i] - codewords[wo + i];
            e += t * t;
          }
          // The plain keep-M rule: insert after every equal value, so ties stay in arrival order.
          if (kept === m && !(e < bestE[m - 1])) continue;
          let at = kept < m ? kept : m - 1;
          while (at > 0 && bestE[at - 1] > e) {
            bestE[at] = bestE[at - 1];
            bestC[at] = bestC[at - 1];
            bestJ[at] = bestJ[at - 1];
            at--;
          }
          bestE[at] = e;
          bestC[at] = c;
          bestJ[at] = j;
          if (kept < m) kept++;
        }
      }
      for (let r = 0; r < kept; r++) {
        const c = bestC[r];
        const wo = (base + bestJ[r]) * d;
        for (let i = 0; i < d; i++) nextPartial[r * d + i] = partial[c * d + i] + codewords[wo + i];
        for (let t = 0; t < s; t++) nextPaths[r * stages + t] = paths[c * stages + t];
        nextPaths[r * stages + s] = bestJ[r];
      }
      [partial, nextPartial] = [nextPartial, partial];
      [paths, nextPaths] = [nextPaths, paths];
      count = kept;
    }
    for (let s = 0; s < stages; s++) indices[s][v] = paths[s];
    for (let i = 0; i < d; i++) recon[i] = partial[i];
    distances[v] = exactDistance(vectors, o, recon, 0, d);
  };
  for (let v = 0; v < n; v++) encodeBlock(v);
  return { indices, distances, rescored };
}
