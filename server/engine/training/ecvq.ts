// Entropy-constrained VQ training (P. A. Chou, T. Lookabaugh and R. M. Gray, "Entropy-constrained vector
// quantization", IEEE Trans. ASSP 37(1), 1989): validation once here, then the kernels of core/entropy-constrained.ts
// and the prefix code of core/huffman.ts. The model is described in README.md beside this file.
import { assignEntropyConstrained, foldEcvqPasses, usageEntropy } from '../core/entropy-constrained';
import { abortError, EngineError, throwIfAborted } from '../core/errors';
import { codedBits, huffmanCodeLengths, MAX_CODE_LENGTH } from '../core/huffman';
import { foldCentroids } from '../core/shard-fold';
import type { EcvqShards, InitMethod } from '../core/types';
import { checkInteger, checkNumber, checkVectors } from '../core/validate';
import { RUN_DEFAULTS } from '../vocabulary';
import { train } from './index';
import { openLocalEcvqShards } from './local-shards';

/** Largest starting codebook: every surviving cell must get a code of at most MAX_CODE_LENGTH bits. */
export const MAX_ECVQ_SIZE = 2 ** MAX_CODE_LENGTH;

export interface EcvqOptions {
  /**
   * λ ≥ 0, the price of one bit: each vector goes to the cell minimising ‖x − c_j‖² + λ·ℓ_j (squared error per vector,
   * bits per vector), which is the same number as MSE per component against bits per component. 0 is plain Lloyd
   * (with empty cells dropped instead of repaired).
   */
  lambda: number;
  /** Stop when (J_prev − J)/J < epsilon, J the Lagrangian per vector; default RUN_DEFAULTS.epsilon (1e-4). */
  epsilon?: number;
  /** Centroid updates at most; default RUN_DEFAULTS.maxIterations (100). */
  maxIterations?: number;
  /** Longest Huffman code built from the training usage, 1..16; default 16. */
  maxCodeLength?: number;
  /** Checked between iterations; rejects with an AbortError. */
  signal?: AbortSignal;
  onIteration?: (s: EcvqIterationStat) => void;
  /**
   * Opens the training set's shards somewhere else (the job engine's workers); by default every shard is computed in
   * this process. Either way the codebooks are the same bits: each iteration folds the shards' partials in shard order.
   */
  openShards?: (set: { n: number; d: number; signal?: AbortSignal }) => Promise<EcvqShards>;
}

export interface EcvqIterationStat {
  lambda: number;
  /** 0 is the starting codebook with equal lengths (a nearest-codeword partition); n follows the n-th update. */
  iteration: number;
  /** Cells used by this iteration's partition. */
  size: number;
  /** Mean squared error per vector component. */
  distortion: number;
  /** Entropy of the partition's index, bits per vector. */
  entropy: number;
  /** Squared error per vector + λ · the lengths the partition was chosen with, per vector. */
  lagrangian: number;
  /** Cells of the codebook this partition left empty (dropped before the next update). */
  emptied: number;
  elapsedMs: number;
}

/** Why training stopped: relative drop below epsilon, an unchanged partition, the iteration cap, or a rise of J. */
export type EcvqStop = 'converged' | 'fixed-point' | 'max-iterations' | 'rose';

export interface EcvqResult {
  lambda: number;
  /** Surviving cells. */
  size: number;
  /** size × d, row-major. */
  codewords: Float32Array;
  /** size: training vectors per cell (all > 0). */
  usage: Uint32Array;
  /** size: each surviving cell's index in the starting codebook. */
  origin: Uint32Array;
  /** Mean squared error per vector component on the training vectors. */
  distortion: number;
  /** Entropy of the index on the training vectors, bits per vector. */
  entropy: number;
  /** Squared error per vector + λ · ideal length (−log2 of the previous cell probabilities), per vector. */
  lagrangian: number;
  /** size: canonical prefix-code lengths (core/huffman.ts) built from `usage`, at most `maxCodeLength` bits. */
  codeLengths: Uint8Array;
  /** Mean length of that code on the training vectors, bits per vector (entropy ≤ it < entropy + 1). */
  codedBitsPerVector: number;
  /** Centroid updates behind the returned codebook. */
  iterations: number;
  stop: EcvqStop;
  trace: EcvqIterationStat[];
}

interface Checked {
  n: number;
  d: number;
  k: number;
  epsilon: number;
  maxIterations: number;
  maxCodeLength: number;
}

function checkCommon(vectors: Float32Array, dimension: number, initialCodewords: Float32Array, options: Omit<EcvqOptions, 'lambda'>): Checked {
  const n = checkVectors(vectors, dimension);
  if (options === null || typeof options !== 'object') throw new EngineError('ENGINE_INVALID_INPUT', 'options must be an object');
  const maxCodeLength = options.maxCodeLength === undefined ? MAX_CODE_LENGTH : checkInteger('maxCodeLength', options.maxCodeLength, 1, MAX_CODE_LENGTH);
  const k = checkVectors(initialCodewords, dimension, 'initialCodewords');
  if (k > 2 ** maxCodeLength) {
    throw new EngineError('ENGINE_INVALID_INPUT', `a starting codebook of ${k} codewords cannot get codes of at most ${maxCodeLength} bits`, { k, maxCodeLength });
  }
  const epsilon = options.epsilon === undefined ? RUN_DEFAULTS.epsilon : checkNumber('epsilon', options.epsilon, 0, 1);
  const maxIterations = options.maxIterations === undefined ? RUN_DEFAULTS.maxIterations : checkInteger('maxIterations', options.maxIterations, 0, 1_000_000);
  if (options.signal !== undefined && !(options.signal instanceof AbortSignal)) throw new EngineError('ENGINE_INVALID_INPUT', 'signal must be an AbortSignal');
  if (options.openShards !== undefined && typeof options.openShards !== 'function') throw new EngineError('ENGINE_INVALID_INPUT', 'openShards must be a function');
  return { n, d: dimension, k, epsilon, maxIterations, maxCodeLength };
}

const checkLambda = (lambda: unknown) => checkNumber('lambda', lambda, 0, Number.MAX_VALUE);

/**
 * Trains an entropy-constrained codebook from a starting codebook (a full-search codebook of the largest size
 * wanted; see `ecvqStartingCodebook`). Deterministic: the same inputs give the same bits.
 * @param vectors          N × d, row-major
 * @param initialCodewords K × d, row-major (K ≤ 2^maxCodeLength)
 */
export async function trainEcvq(vectors: Float32Array, dimension: number, initialCodewords: Float32Array, options: EcvqOptions): Promise<EcvqResult> {
  const c = checkCommon(vectors, dimension, initialCodewords, options);
  const lambda = checkLambda(options.lambda);
  const shards = await openShards(vectors, c, options);
  try {
    return await runEcvq(shards, initialCodewords, c, lambda, options);
  } finally {
    await shards.close();
  }
}

function openShards(vectors: Float32Array, c: Checked, options: Omit<EcvqOptions, 'lambda'>): Promise<EcvqShards> {
  return options.openShards ? options.openShards({ n: c.n, d: c.d, signal: options.signal }) : Promise.resolve(openLocalEcvqShards(vectors, c.d));
}

/**
 * One entropy-constrained codebook per λ, each trained from the same starting codebook, in the order given.
 * @returns one result per entry of `lambdas`
 */
export async function sweepEcvq(
  vectors: Float32Array, dimension: number, initialCodewords: Float32Array, lambdas: readonly number[], options: Omit<EcvqOptions, 'lambda'> = {},
): Promise<EcvqResult[]> {
  const c = checkCommon(vectors, dimension, initialCodewords, options);
  if (!Array.isArray(lambdas) || lambdas.length === 0) throw new EngineError('ENGINE_INVALID_INPUT', 'lambdas must be a non-empty array');
  const checked = lambdas.map(checkLambda);
  const out: EcvqResult[] = [];
  const shards = await openShards(vectors, c, options);
  try {
    for (const lambda of checked) out.push(await runEcvq(shards, initialCodewords, c, lambda, options));
  } finally {
    await shards.close();
  }
  return out;
}

export interface EcvqStartOptions {
  /** Codebook size K: the most cells any λ can keep. */
  size: number;
  init: InitMethod;
  epsilon?: number;
  maxIterations?: number;
  seed?: number;
  threads?: number;
  signal?: AbortSignal;
}

/**
 * The full-search codebook an entropy-constrained run starts from: the engine's `train` (generalized Lloyd) at size K.
 * @returns codewords: K × d, row-major
 */
export async function ecvqStartingCodebook(vectors: Float32Array, dimension: number, options: EcvqStartOptions): Promise<Float32Array> {
  if (options === null || typeof options !== 'object') throw new EngineError('ENGINE_INVALID_INPUT', 'options must be an object');
  checkInteger('size', options.size, 1, MAX_ECVQ_SIZE);
  const { size, ...rest } = options;
  const result = await train(vectors, dimension, { ...rest, k: size });
  return result.codebooks[result.codebooks.length - 1].codewords;
}

/**
 * Encoder of an entropy-constrained codebook: per vector the cell minimising ‖x − c_j‖² + λ·lengths[j] (exact float64,
 * ties to the lowest index). `lengths` are the code lengths in bits the stream will use (the Huffman lengths, or the
 * ideal −log2 p_j); a cell with length 0 has no code and is never chosen.
 * @param vectors   N × d, row-major
 * @param codewords K × d, row-major
 * @param lengths   K, bits
 * @returns indices N and errors N (‖x − c‖² of the chosen codeword)
 */
export function assignEcvq(
  vectors: Float32Array, dimension: number, codewords: Float32Array, lengths: ArrayLike<number>, lambda: number,
): { indices: Uint32Array; errors: Float64Array } {
  const n = checkVectors(vectors, dimension);
  const k = checkVectors(codewords, dimension, 'codewords');
  checkLambda(lambda);
  if (lengths === null || typeof lengths !== 'object' || lengths.length !== k) {
    throw new EngineError('ENGINE_INVALID_INPUT', `lengths must hold one entry per codeword (${k})`);
  }
  const live: number[] = [];
  for (let j = 0; j < k; j++) {
    const l = lengths[j];
    if (typeof l !== 'number' || !Number.isFinite(l) || l < 0) throw new EngineError('ENGINE_INVALID_INPUT', `lengths[${j}] must be a finite number ≥ 0`);
    if (l > 0) live.push(j);
  }
  if (live.length === 0) throw new EngineError('ENGINE_INVALID_INPUT', 'no codeword has a code (every length is 0)');
  // Only cells with a code take part; indices are mapped back to the full codebook afterwards (order kept, so ties
  // still go to the lowest index).
  const d = dimension;
  const sub = new Float32Array(live.length * d);
  const penalties = new Float64Array(live.length);
  live.forEach((j, at) => {
    sub.set(codewords.subarray(j * d, j * d + d), at * d);
    penalties[at] = lambda * lengths[j];
  });
  const indices = new Uint32Array(n);
  const errors = new Float64Array(n);
  assignEntropyConstrained(vectors, d, sub, penalties, indices, errors, false);
  for (let v = 0; v < n; v++) indices[v] = live[indices[v]];
  return { indices, errors };
}

interface State {
  iteration: number;
  codewords: Float32Array;
  origin: Uint32Array;
  counts: Uint32Array;
  distortion: number;
  entropy: number;
  lagrangian: number;
}

const yieldTurn = () => new Promise<void>((resolve) => setImmediate(resolve));

/**
 * The iteration over the shards: each pass is every shard's partial (core ecvqShardPass), folded in shard order, so
 * the codebook is the same bits wherever the shards are computed.
 */
async function runEcvq(shards: EcvqShards, initial: Float32Array, c: Checked, lambda: number, options: Omit<EcvqOptions, 'lambda'>): Promise<EcvqResult> {
  const { n, d, epsilon, maxIterations, maxCodeLength } = c;
  const { signal } = options;
  const trace: EcvqIterationStat[] = [];
  const started = performance.now();
  let codewords: Float32Array = initial.slice();
  let origin = Uint32Array.from({ length: c.k }, (_, j) => j);
  // No probabilities exist before the first partition: equal lengths, which make it a nearest-codeword partition.
  let lengths = new Float64Array(c.k).fill(Math.log2(c.k));
  // The previous partition's counts and float64 sums by starting-codebook index. A partition with the same counts and
  // sums in every cell gives the same update again: a fixed point (the shards need not remember their partition).
  const seenCounts = new Uint32Array(c.k);
  const seenSums = new Float64Array(c.k * d);
  const sums = new Float64Array(c.k * d);
  let prev: State | null = null;
  let stop: EcvqStop;
  let kept: State;
  try {
    for (let t = 0; ; t++) {
      throwIfAborted(signal);
      await yieldTurn();
      throwIfAborted(signal);
      const k = lengths.length;
      const penalties = lengths.map((l) => lambda * l);
      const parts = await shards.ecvqPass({ codewords, k, penalties, lengths, origin }, signal);
      const { usage: counts, total: squared, bits } = foldEcvqPasses(parts, k);
      const centroids = new Float32Array(k * d);
      foldCentroids(parts, k, d, centroids, sums);
      let changed = t === 0;
      for (let j = 0; j < k && !changed; j++) {
        if (counts[j] === 0) continue;
        const o = origin[j];
        if (seenCounts[o] !== counts[j]) changed = true;
        for (let i = 0; i < d && !changed; i++) if (seenSums[o * d + i] !== sums[j * d + i]) changed = true;
      }
      seenCounts.fill(0);
      for (let j = 0; j < k; j++) {
        if (counts[j] === 0) continue;
        seenCounts[origin[j]] = counts[j];
        seenSums.set(sums.subarray(j * d, j * d + d), origin[j] * d);
      }
      let used = 0;
      for (let j = 0; j < k; j++) if (counts[j] > 0) used++;
      const state: State = {
        iteration: t, codewords, origin, counts,
        distortion: squared / (n * d),
        entropy: usageEntropy(counts, n),
        lagrangian: (squared + lambda * bits) / n,
      };
      const stat: EcvqIterationStat = {
        lambda, iteration: t, size: used, distortion: state.distortion, entropy: state.entropy, lagrangian: state.lagrangian,
        emptied: k - used, elapsedMs: performance.now() - started,
      };
      trace.push(stat);
      options.onIteration?.(stat);
      if (prev && state.lagrangian > prev.lagrangian) {
        // Possible by a hair near convergence, since codewords are stored in float32: keep the better codebook.
        stop = 'rose';
        kept = prev;
        break;
      }
      kept = state;
      if (!changed) {
        stop = 'fixed-point';
        break;
      }
      if (prev && (state.lagrangian === 0 || (prev.lagrangian - state.lagrangian) / state.lagrangian < epsilon)) {
        stop = 'converged';
        break;
      }
      if (t === maxIterations) {
        stop = 'max-iterations';
        break;
      }
      // Update: drop the cells this partition left empty, move each codeword to its cell's centroid (the shards' sums
      // folded in shard order), and price each cell at −log2 of its probability.
      const keep: number[] = [];
      for (let j = 0; j < k; j++) if (counts[j] > 0) keep.push(j);
      codewords = new Float32Array(keep.length * d);
      keep.forEach((j, at) => codewords.set(centroids.subarray(j * d, j * d + d), at * d));
      origin = Uint32Array.from(keep, (j) => origin[j]);
      lengths = Float64Array.from(keep, (j) => -Math.log2(counts[j] / n));
      prev = state;
    }
  } catch (err) {
    if (signal?.aborted && !(err instanceof EngineError)) throw abortError(signal);
    throw err;
  }
  return resultOf(kept, stop, lambda, d, n, maxCodeLength, trace);
}

function resultOf(s: State, stop: EcvqStop, lambda: number, d: number, n: number, maxCodeLength: number, trace: EcvqIterationStat[]): EcvqResult {
  // A partition may leave cells of its codebook empty; they carry no vectors, so dropping them changes no figure.
  const keep: number[] = [];
  for (let j = 0; j < s.counts.length; j++) if (s.counts[j] > 0) keep.push(j);
  const codewords = new Float32Array(keep.length * d);
  keep.forEach((j, at) => codewords.set(s.codewords.subarray(j * d, j * d + d), at * d));
  const usage = Uint32Array.from(keep, (j) => s.counts[j]);
  const codeLengths = huffmanCodeLengths(usage, maxCodeLength);
  return {
    lambda,
    size: keep.length,
    codewords,
    usage,
    origin: Uint32Array.from(keep, (j) => s.origin[j]),
    distortion: s.distortion,
    entropy: s.entropy,
    lagrangian: s.lagrangian,
    codeLengths,
    codedBitsPerVector: codedBits(codeLengths, usage) / n,
    iterations: s.iteration,
    stop,
    trace,
  };
}
