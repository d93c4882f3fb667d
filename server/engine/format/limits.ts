/**
 * Limits of what a codebook document may record. The bits and iteration limits are the run vocabulary's
 * (../vocabulary.ts), named here as the format uses them.
 */
import { BITS, ITERATIONS } from '../vocabulary';

/** Index bits of the largest codebook, and its size. */
export const MAX_BITS = BITS.max;
export const MAX_SIZE = 2 ** MAX_BITS;

/** Lloyd iterations per codebook size a training may run and a document may record. */
export const MAX_ITERATIONS = ITERATIONS.max;

/**
 * Entries of a training trace: one per Lloyd pass, that is iteration 0 (the starting codebook) and at most
 * maxIterations updates per size, and a split training records every size 1, 2, 4, … up to K (ceil(log2 K) + 1 sizes).
 * The document bound uses the document's own bits and maxIterations; this is the bound for any document.
 */
export function maxTraceLength(bits: number, maxIterations: number): number {
  return (bits + 1) * (maxIterations + 1);
}
export const MAX_TRACE_LENGTH = maxTraceLength(MAX_BITS, MAX_ITERATIONS);

/**
 * Characters of `training.source` (what the codebook was trained on). The command line records the folder or .npy
 * path it was given, and Linux paths are at most PATH_MAX = 4096 bytes (linux/limits.h), so 4096 fits any of them; the
 * server records `run <id> "<name>" (<n> training images)`, far shorter.
 */
export const MAX_SOURCE_LENGTH = 4096;

/**
 * Codeword values are IEEE 754 binary32. A decimal is finite as float32 when it rounds (to nearest, ties to even)
 * below 2^128: that holds for |x| < 2^128 − 2^103, halfway between the largest finite binary32 (2^128 − 2^104 =
 * 3.4028234663852886e38) and 2^128. The bound is exclusive; the largest finite value itself is written 3.4028235e38,
 * which is above it as a float64 but rounds back to it, so it must pass.
 */
export const FLOAT32_MAX = 3.4028234663852886e38;
export const FLOAT32_ROUNDING_LIMIT = 2 ** 128 - 2 ** 103;

/**
 * Longest root-to-leaf path of a tree-structured codebook, in bits: a path then fits one 32-bit word, which a
 * decoder on a 32-bit microcontroller reads in one register (common practice). A balanced tree of the largest table
 * (2^14 nodes) is 13 deep; the rest is room for greedy-grown unbalanced trees.
 */
export const MAX_TREE_DEPTH = 32;
/** The resynchronisation marker interval is one container header byte, so 1..255 block rows (0: no markers). */
export const MAX_RESYNC_ROWS = 255;
