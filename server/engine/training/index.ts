// Training and assignment: validation happens here, once, at the numeric entry; the kernels of core/ behind it
// trust their input. This layer wires the kernels to the nearest search (parallel/, wasm/), which core never imports.
import { accumulateCentroids } from '../core/accumulate-centroids';
import { EngineError, abortError, throwIfAborted } from '../core/errors';
import { initRandom, seedOverShards } from '../core/init';
import { runLloyd } from '../core/lloyd';
import { createRng } from '../core/rng';
import { shiftCodewords, type ShiftContext } from '../core/shift-cells';
import { splitAlongPrincipalDirections } from '../core/split';
import type { Assignment, InitMethod, TrainOptions, TrainResult, TrainedCodebook } from '../core/types';
import { checkInteger, checkNumber, checkVectors, countDistinctUpTo } from '../core/validate';
import { NearestSearch } from '../parallel/nearest-search';
import { openLocalShards } from './local-shards';
import { NearestKernel } from '../wasm/kernel';
import { INIT, INIT_METHODS, RUN_DEFAULTS, SEED } from '../vocabulary';

export type {
  CellMember, SeedChoice, SeedStep, ShardAssignment, ShardExecutor, ShardMove, ShardSplitSums, ShardSums, SplitRequest,
  EcvqPassRequest, EcvqShardPass, EcvqShards, TreeShards,
  Assignment, InitMethod, IterationStat, TrainOptions, TrainProgress, TrainResult, TrainedCodebook,
} from '../core/types';
export { createRng, type Rng } from '../core/rng';
export { shardLayout, shardStart, shardEnd, MAX_SHARDS, MIN_SHARD_VECTORS, type ShardLayout } from '../core/shard-layout';
export { ShardState } from './shard-state';
export { distancesToNewest } from '../core/init';
export { SearchCrew } from '../parallel/nearest-search';
export { EngineError, type EngineErrorCode } from '../core/errors';
export { exactDistance, bruteForceAssign } from '../core/exact-distance';
export { threadBudget, ThreadBudget, shutdownEngineWorkers, engineWorkerStats, sharedVectors } from '../parallel/index';

export const DEFAULT_EPSILON = RUN_DEFAULTS.epsilon;
export const DEFAULT_MAX_ITERATIONS = RUN_DEFAULTS.maxIterations;
export const DEFAULT_SEED = RUN_DEFAULTS.seed;
/** Largest codebook the engine accepts (2^24; b = 14 needs 2^14). */
export const MAX_K = 1 << 24;

const INITS: readonly InitMethod[] = INIT_METHODS;

/**
 * Trains codebooks on vectors (N × d, row-major) by the generalized Lloyd algorithm.
 * Fails with ENGINE_TOO_FEW_VECTORS when N < k and ENGINE_TOO_FEW_DISTINCT_VECTORS when
 * fewer than k distinct vectors exist, before any work is done.
 */
export async function train(vectors: Float32Array, dimension: number, options: TrainOptions): Promise<TrainResult> {
  const n = checkVectors(vectors, dimension);
  const d = dimension;
  if (options === null || typeof options !== 'object') {
    throw new EngineError('ENGINE_INVALID_INPUT', 'options must be an object');
  }
  const k = checkInteger('k', options.k, 1, MAX_K);
  if (!INITS.includes(options.init)) {
    throw new EngineError('ENGINE_INVALID_INPUT', `init must be one of ${INITS.join(', ')}`, { init: options.init });
  }
  const epsilon = options.epsilon === undefined ? DEFAULT_EPSILON : checkNumber('epsilon', options.epsilon, 0, 1);
  const maxIterations = options.maxIterations === undefined
    ? DEFAULT_MAX_ITERATIONS
    : checkInteger('maxIterations', options.maxIterations, 0, 1_000_000);
  const seed = options.seed === undefined ? DEFAULT_SEED : checkInteger('seed', options.seed, SEED.min, SEED.max);
  if (options.threads !== undefined) checkInteger('threads', options.threads, 1, 1024);
  if (options.initialCodewords !== undefined) {
    checkVectors(options.initialCodewords, d, 'initialCodewords');
    if (options.initialCodewords.length !== k * d) {
      throw new EngineError('ENGINE_INVALID_INPUT', `initialCodewords must hold k × d = ${k * d} values`, {
        length: options.initialCodewords.length,
      });
    }
  }
  if (n < k) {
    throw new EngineError('ENGINE_TOO_FEW_VECTORS', `${n} training vectors cannot fill ${k} codewords`, { vectors: n, k });
  }
  const distinct = countDistinctUpTo(vectors, d, k);
  if (distinct < k) {
    throw new EngineError(
      'ENGINE_TOO_FEW_DISTINCT_VECTORS',
      `the training set has only ${distinct} distinct vectors, fewer than ${k} codewords`,
      { distinct, k },
    );
  }
  const { signal } = options;
  throwIfAborted(signal);

  const split = options.init === INIT.split && !options.initialCodewords;
  const sizes: number[] = [];
  if (split) {
    for (let s = 1; s < k; s *= 2) sizes.push(s);
    sizes.push(k);
  } else {
    sizes.push(k);
  }
  // Cost of one pass grows with the codebook size, so progress weights sizes by it.
  const totalWeight = sizes.reduce((s, x) => s + x, 0);
  let doneWeight = 0;

  const shards = options.openShards
    ? await options.openShards({ n, d, maxK: k, signal })
    : await openLocalShards(vectors, d, { threads: options.threads, maxK: k, signal });
  try {
    let start: Float32Array | undefined;
    if (!split) {
      const rng = createRng(seed);
      if (options.initialCodewords) start = options.initialCodewords.slice();
      else if (options.init === INIT.random) start = initRandom(vectors, d, k, rng);
      // k-means++ keeps its D² in the shards, wherever they are computed: the same picks either way.
      else start = await seedOverShards(vectors, d, k, rng, shards, signal);
      throwIfAborted(signal);
    }
    const ctx: ShiftContext = {
      d, n, shards, epsilon, maxIterations, signal,
      onIteration: options.onIteration,
      progress: options.onProgress
        ? (size, iteration, distortion) => {
            const within = maxIterations > 0 ? Math.min(1, iteration / maxIterations) : 1;
            options.onProgress!({
              size, targetSize: k, iteration, distortion,
              fraction: Math.min(1, (doneWeight + size * within) / totalWeight),
            });
          }
        : undefined,
    };
    const codebooks: TrainedCodebook[] = [];
    if (start) {
      codebooks.push(await runLloyd(ctx, start, k));
    } else {
      const centroid = new Float32Array(d);
      accumulateCentroids(vectors, d, new Uint32Array(n), centroid, 1);
      let book = await runLloyd(ctx, centroid, 1);
      codebooks.push(book);
      doneWeight += 1;
      for (let i = 1; i < sizes.length; i++) {
        throwIfAborted(signal);
        const next = await splitAlongPrincipalDirections(book, d, sizes[i], shards, signal);
        book = await shiftCodewords(ctx, await runLloyd(ctx, next, sizes[i]), k);
        codebooks.push(book);
        doneWeight += sizes[i];
      }
    }
    const last = codebooks[codebooks.length - 1];
    options.onProgress?.({
      size: last.size, targetSize: k, iteration: last.iterations, distortion: last.distortion, fraction: 1,
    });
    return { dimension: d, vectorCount: n, codebooks };
  } catch (err) {
    if (signal?.aborted && !(err instanceof EngineError)) throw abortError(signal);
    throw err;
  } finally {
    await shards.close();
  }
}

function checkCodebook(codewords: Float32Array, d: number): number {
  return checkVectors(codewords, d, 'codewords');
}

/** Nearest codeword of each vector (exact; ties to the lowest index) on the budget's threads. */
export async function assign(
  vectors: Float32Array, dimension: number, codewords: Float32Array,
  options: { threads?: number; signal?: AbortSignal } = {},
): Promise<Assignment> {
  checkVectors(vectors, dimension);
  const k = checkCodebook(codewords, dimension);
  if (options.threads !== undefined) checkInteger('threads', options.threads, 1, 1024);
  throwIfAborted(options.signal);
  const search = await NearestSearch.open(vectors, dimension, { ...options, maxK: k });
  try {
    await search.run(codewords, k, options.signal);
    return { indices: search.indices, distances: search.distances };
  } finally {
    search.close();
  }
}

let syncKernel: NearestKernel | undefined;

/** Same results as assign(), on the calling thread. */
export function assignSync(vectors: Float32Array, dimension: number, codewords: Float32Array): Assignment {
  const n = checkVectors(vectors, dimension);
  const k = checkCodebook(codewords, dimension);
  syncKernel ??= new NearestKernel();
  syncKernel.setCodebook(codewords, k, dimension);
  const indices = new Uint32Array(n);
  const distances = new Float64Array(n);
  syncKernel.assignRange(vectors, 0, n, indices, distances);
  return { indices, distances };
}
