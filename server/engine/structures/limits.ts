// Limits of the structured codebooks, one definition for the engine, the format and the command line.
import { BITS, REFINEMENT_PASSES } from '../vocabulary';

/** Deepest balanced tree: as many leaves as the largest full-search codebook (2^BITS.max). */
export const TREE_MAX_BALANCED_DEPTH = BITS.max;
/**
 * Longest path of any tree. A path is coded as an unsigned integer of its length in bits (uint32 here), and each
 * node's seed (seed + heap index · 2^31, tree.ts) must stay an exact integer below 2^53: heap indices < 2^21.
 */
export const TREE_MAX_DEPTH = 20;
/** Most leaves a greedy-grown tree may be asked for: the largest full-search codebook. */
export const TREE_MAX_LEAVES = 2 ** BITS.max;
/** Stages of a residual codebook. */
export const RESIDUAL_MAX_STAGES = 8;
/** Bits of one residual stage: its codewords are 2^bits, each stage at most as large as a full-search codebook. */
export const RESIDUAL_STAGE_BITS = { min: 1, max: BITS.max } as const;
/** Candidates an M-best residual search keeps per stage, at most. */
export const M_BEST_MAX = 64;
/** Joint refinement passes of a residual codebook, at most. */
export const RESIDUAL_MAX_REFINEMENT_PASSES = REFINEMENT_PASSES.max;
/**
 * Size of the perturbation that starts a node's 2-means: the children start at c ± δσ·u, σ the node's RMS error per
 * component and u a seeded random direction of length √d (the length of (1, …, 1), as LBG splitting uses).
 */
export const DEFAULT_TREE_SPLIT_DELTA = 0.01;
