// Residual (multistage) VQ: S stages, each a full-search codebook of 2^{b_s} codewords trained by the engine's Lloyd
// iteration on what the stages before it left; a block is the sum of one codeword per stage. The model, its
// assumptions and costs are described in README.md beside this file.
import { EngineError, throwIfAborted } from '../core/errors';
import type { InitMethod } from '../core/types';
import { checkInteger, checkNumber, checkVectors } from '../core/validate';
import { searchResidualStages } from './residual-search';
import { train } from '../training/index';
import { INIT_METHODS, RUN_DEFAULTS, SEED } from '../vocabulary';
import { M_BEST_MAX, RESIDUAL_MAX_REFINEMENT_PASSES, RESIDUAL_MAX_STAGES, RESIDUAL_STAGE_BITS } from './limits';
import type { ResidualStructure } from './types';

export type ResidualSearch = ResidualStructure['search'];

export interface ResidualOptions {
  /** Bits per stage, stage 0 first: stage s has 2^bits[s] codewords. */
  bits: number[];
  /** How each stage's Lloyd iteration starts; default RUN_DEFAULTS.init. */
  init?: InitMethod;
  /** The search the codebook is used with (and refined for); default greedy. */
  search?: ResidualSearch;
  /** Joint refinement passes after the sequential design; default 0. */
  refinementPasses?: number;
  /** Default RUN_DEFAULTS.seed, the same for every stage. */
  seed?: number;
  epsilon?: number;
  maxIterations?: number;
  threads?: number;
  signal?: AbortSignal;
  onProgress?: (p: { stage: number; pass: number; distortion: number }) => void;
}

export interface ResidualStageStat {
  stage: number;
  bits: number;
  /** MSE per component on the training vectors after greedy encoding with stages 0..stage. */
  distortion: number;
  /** Centroid updates of the stage's training. */
  iterations: number;
}

export interface ResidualRefinementStep {
  pass: number;
  stage: number;
  /** MSE per component with the codebook's search before and after re-training the stage. */
  before: number;
  after: number;
  /** Whether the re-trained stage was kept (its distortion did not rise). */
  kept: boolean;
}

export interface ResidualResult {
  /** (Σ 2^bits[s]) × d, row-major, stage 0 first. */
  codewords: Float32Array;
  structure: ResidualStructure;
  stages: ResidualStageStat[];
  refinement: ResidualRefinementStep[];
  /** MSE per component on the training vectors with the structure's search. */
  distortion: number;
  /** The same with greedy search (equal to `distortion` when the search is greedy). */
  greedyDistortion: number;
  /** Σ bits[s], bits per block. */
  rate: number;
  /** Σ 2^bits[s]. */
  tableCodewords: number;
  elapsedMs: number;
}

export interface ResidualCodes {
  /** S arrays of N: each block's index in every stage. */
  indices: Uint32Array[];
  /** N: exact squared distance of each vector to its reconstruction (the decoder's float32 sum). */
  distances: Float64Array;
}

const invalid = (message: string, details?: Record<string, unknown>) => new EngineError('ENGINE_INVALID_INPUT', message, details);

/** Offsets of the stages in the table (in codewords) and the table size. */
function layout(bits: readonly number[]): { offsets: number[]; sizes: number[]; total: number } {
  const sizes = bits.map((b) => 2 ** b);
  const offsets: number[] = [];
  let total = 0;
  for (const k of sizes) {
    offsets.push(total);
    total += k;
  }
  return { offsets, sizes, total };
}

function checkBits(bits: unknown): number[] {
  if (!Array.isArray(bits) || bits.length < 1 || bits.length > RESIDUAL_MAX_STAGES) {
    throw invalid(`bits must list 1..${RESIDUAL_MAX_STAGES} stages`, { bits });
  }
  return bits.map((b, s) => checkInteger(`bits[${s}]`, b, RESIDUAL_STAGE_BITS.min, RESIDUAL_STAGE_BITS.max));
}

function checkSearch(search: unknown): ResidualSearch {
  const s = search as ResidualSearch | undefined;
  if (s?.kind === 'greedy') return { kind: 'greedy' };
  if (s?.kind === 'm-best') return { kind: 'm-best', m: checkInteger('search.m', s.m, 1, M_BEST_MAX) };
  throw invalid("search must be { kind: 'greedy' } or { kind: 'm-best', m }", { search });
}

/** Checks a residual structure against its table (codewords Σ 2^bits[s] × d). */
export function checkResidual(codewords: Float32Array, structure: ResidualStructure, d: number): void {
  const bits = checkBits(structure.bits);
  checkSearch(structure.search);
  const { total } = layout(bits);
  if (!(codewords instanceof Float32Array) || codewords.length !== total * d) {
    throw invalid(`a residual codebook with stages of ${bits.join(' + ')} bits needs ${total * d} codeword values`, {
      values: codewords?.length,
    });
  }
}

/**
 * Encodes vectors (N × d) by M-best search: stage by stage it keeps the M partial sums nearest the vector (float64
 * sums, float64 distances; ties to the earlier candidate, then the lower index) and extends each by every codeword of
 * the next stage. M = 1 is greedy search, each stage the nearest codeword to what the stages before left. With two
 * stages M-best is never worse than greedy (greedy's pair is among the candidates of the last stage); with more it
 * usually is not, but a single vector can lose. The search itself is residual-search.ts (inner products, exact).
 */
function searchStages(codewords: Float32Array, bits: readonly number[], d: number, vectors: Float32Array, m: number): ResidualCodes {
  const { indices, distances } = searchResidualStages(codewords, bits, d, vectors, m);
  return { indices, distances };
}

const widthOf = (search: ResidualSearch) => (search.kind === 'greedy' ? 1 : search.m);

/** Encodes vectors (N × d) with the structure's search: one index per stage and block. */
export function encodeResidual(codewords: Float32Array, structure: ResidualStructure, vectors: Float32Array, d: number): ResidualCodes {
  checkResidual(codewords, structure, d);
  checkVectors(vectors, d);
  return searchStages(codewords, structure.bits, d, vectors, widthOf(structure.search));
}

/** Rebuilds blocks (N × d): the sum of one codeword per stage, in float64 in stage order, rounded once to float32. */
export function decodeResidual(codewords: Float32Array, structure: ResidualStructure, indices: readonly Uint32Array[], d: number): Float32Array {
  checkResidual(codewords, structure, d);
  const { offsets, sizes } = layout(structure.bits);
  if (!Array.isArray(indices) || indices.length !== sizes.length) throw invalid(`one index array per stage (${sizes.length}) is needed`);
  const n = indices[0].length;
  if (indices.some((a) => !(a instanceof Uint32Array) || a.length !== n)) throw invalid('every stage needs a Uint32Array of the same length');
  const out = new Float32Array(n * d);
  const sum = new Float64Array(d);
  for (let v = 0; v < n; v++) {
    sum.fill(0);
    for (let s = 0; s < sizes.length; s++) {
      const j = indices[s][v];
      if (j >= sizes[s]) throw invalid(`stage ${s} index ${j} of block ${v} is not below ${sizes[s]}`, { block: v, stage: s });
      const wo = (offsets[s] + j) * d;
      for (let i = 0; i < d; i++) sum[i] += codewords[wo + i];
    }
    for (let i = 0; i < d; i++) out[v * d + i] = sum[i];
  }
  return out;
}

const meanOf = (distances: Float64Array, d: number) => {
  let s = 0;
  for (let v = 0; v < distances.length; v++) s += distances[v];
  return s / (distances.length * d);
};

/** vectors − (the sum of every stage's chosen codeword but `skip`'s), rounded to float32 (N × d). */
function leftOver(
  vectors: Float32Array, d: number, codewords: Float32Array, bits: readonly number[], indices: readonly Uint32Array[], skip: number,
): Float32Array {
  const n = vectors.length / d;
  const { offsets } = layout(bits);
  const out = new Float32Array(n * d);
  const sum = new Float64Array(d);
  for (let v = 0; v < n; v++) {
    sum.fill(0);
    for (let s = 0; s < bits.length; s++) {
      if (s === skip) continue;
      const wo = (offsets[s] + indices[s][v]) * d;
      for (let i = 0; i < d; i++) sum[i] += codewords[wo + i];
    }
    for (let i = 0; i < d; i++) out[v * d + i] = vectors[v * d + i] - sum[i];
  }
  return out;
}

/**
 * Trains a residual codebook on vectors (N × d, row-major). Sequential design: stage s is trained by the engine's
 * Lloyd iteration (`train`, any initialisation) on what greedy encoding with stages 0..s−1 leaves of each vector.
 * Each joint refinement pass then re-trains every stage in turn, from its current codewords, on the vectors less the
 * other stages' chosen codewords (under the structure's search), and keeps the new stage only if the distortion with
 * that search does not rise. Deterministic for a seed.
 */
export async function trainResidual(vectors: Float32Array, d: number, opts: ResidualOptions): Promise<ResidualResult> {
  checkVectors(vectors, d);
  if (opts === null || typeof opts !== 'object') throw invalid('options must be an object');
  const bits = checkBits(opts.bits);
  const search = opts.search === undefined ? ({ kind: 'greedy' } as const) : checkSearch(opts.search);
  const init = opts.init ?? RUN_DEFAULTS.init;
  if (!INIT_METHODS.includes(init)) throw invalid(`init must be one of ${INIT_METHODS.join(', ')}`, { init });
  const passes = opts.refinementPasses === undefined ? 0 : checkInteger('refinementPasses', opts.refinementPasses, 0, RESIDUAL_MAX_REFINEMENT_PASSES);
  const lloyd = {
    seed: opts.seed === undefined ? RUN_DEFAULTS.seed : checkInteger('seed', opts.seed, SEED.min, SEED.max),
    epsilon: opts.epsilon === undefined ? RUN_DEFAULTS.epsilon : checkNumber('epsilon', opts.epsilon, 0, 1),
    maxIterations: opts.maxIterations === undefined ? RUN_DEFAULTS.maxIterations : checkInteger('maxIterations', opts.maxIterations, 0, 1_000_000),
    threads: opts.threads,
    signal: opts.signal,
  };
  const t0 = performance.now();
  const { offsets, sizes, total } = layout(bits);
  const table = new Float32Array(total * d);
  const stages: ResidualStageStat[] = [];
  const structure: ResidualStructure = { kind: 'residual', bits, search };

  let rest = vectors;
  for (let s = 0; s < bits.length; s++) {
    throwIfAborted(opts.signal);
    const result = await train(rest, d, { k: sizes[s], init, ...lloyd });
    const book = result.codebooks[result.codebooks.length - 1];
    table.set(book.codewords, offsets[s] * d);
    const sofar = bits.slice(0, s + 1);
    const greedy = searchStages(table.subarray(0, (offsets[s] + sizes[s]) * d), sofar, d, vectors, 1);
    const distortion = meanOf(greedy.distances, d);
    stages.push({ stage: s, bits: bits[s], distortion, iterations: result.codebooks.reduce((a, b) => a + b.iterations, 0) });
    opts.onProgress?.({ stage: s, pass: 0, distortion });
    if (s + 1 < bits.length) rest = leftOver(vectors, d, table, sofar, greedy.indices, -1);
  }

  const m = widthOf(search);
  let codes = searchStages(table, bits, d, vectors, m);
  let distortion = meanOf(codes.distances, d);
  const refinement: ResidualRefinementStep[] = [];
  for (let pass = 1; pass <= passes; pass++) {
    for (let s = 0; s < bits.length; s++) {
      throwIfAborted(opts.signal);
      const targets = leftOver(vectors, d, table, bits, codes.indices, s);
      const start = table.slice(offsets[s] * d, (offsets[s] + sizes[s]) * d);
      const result = await train(targets, d, { k: sizes[s], init, initialCodewords: start, ...lloyd });
      const candidate = table.slice();
      candidate.set(result.codebooks[0].codewords, offsets[s] * d);
      const next = searchStages(candidate, bits, d, vectors, m);
      const after = meanOf(next.distances, d);
      const kept = after <= distortion;
      refinement.push({ pass, stage: s, before: distortion, after, kept });
      if (kept) {
        table.set(candidate);
        codes = next;
        distortion = after;
      }
      opts.onProgress?.({ stage: s, pass, distortion });
    }
  }
  const greedyDistortion = m === 1 ? distortion : meanOf(searchStages(table, bits, d, vectors, 1).distances, d);
  return {
    codewords: table,
    structure,
    stages,
    refinement,
    distortion,
    greedyDistortion,
    rate: bits.reduce((a, b) => a + b, 0),
    tableCodewords: total,
    elapsedMs: performance.now() - t0,
  };
}

