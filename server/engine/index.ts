/**
 * Public API of the Cellwright engine, for the server, job workers and the command line.
 * Inputs are validated here, once (zod for option objects; the core validates its typed arrays); the modules behind
 * this file trust what they are given. Everything here is pure TypeScript over sharp, zod, ssim.js and node built-ins.
 */
import { readFile } from 'node:fs/promises';
import { z } from 'zod';
import { createRng, DEFAULT_EPSILON, DEFAULT_MAX_ITERATIONS, DEFAULT_SEED, train, type IterationStat, type TrainProgress } from './training';
import { issuePath, makeCodebook, MAX_BITS, MAX_ITERATIONS, MAX_SIZE, MAX_SOURCE_LENGTH, type Codebook, type PatchInfo, type PreprocessingInfo, type TrainingInfo } from './format/codebook-schema';
import { encodeImage, reconstruct, reconstructOnThreads, type EncodedImage } from './format/codec';
import { MAX_RESYNC_ROWS, PAYLOAD_CHOICES, readContainer, writeContainer, type ContainerOptions } from './format/container';
import {
  assignIndices, BER, CHANNEL_SEEDS, DEFAULT_BERS, DEFAULT_REORDER_BER, MAX_BERS, REORDER_MAX_BITS, simulateChannel, type ChannelCurve, type IndexAssignment,
} from './channel';
import { buildFirmwareBundle, measureFixedPointCost, RESIDUAL_WIDTHS, type FirmwareBundle, type FixedPointTable, type RoundingCost } from './firmware';
import { EngineInputError } from './input-error';
import { channelsOf, decodeImage, type CodableImage, type ColorMode, type PixelImage } from './io/image';
import { removeMeans } from './io/mean-removal';
import { extractTrainingVectors, streamTrainingVectors, vectorDimension, type TrainingImageSource } from './io/patches';
import { readNpy, type NpyMatrix } from './io/npy';
import { writeZip } from './io/zip';
import { baselineCurve, type BaselineCodec, type BaselinePoint } from './metrics/baselines';
import { evaluateImages, evaluateVectors, type ImageSetEvaluation, type VectorSetEvaluation } from './metrics/evaluate';
import { COLOR_MODES, EPSILON, initMethodSchema, ITERATIONS, LAMBDA, MAX_LAMBDAS, MEAN_BITS, PATCH_SIDE, SEED, type InitMethod } from './vocabulary';
import { trainEcvq } from './training/ecvq';
import { MAX_CODE_LENGTH } from './core/huffman';
import { maxTraceLength } from './format/limits';
import { indexBits as tableIndexBits } from './format/rate-bits';
import { encodeResidual, trainResidual, type ResidualSearch } from './structures/residual';
import { trainTree, type TreeGrowth } from './structures/tree';
import { encodePng } from './io/png';
import { codebookMixture as mixtureOf, mixtureWithVariances, scoreVectors as scoreMixture, type PatchMixture, type VarianceSource, type VectorScores } from './model/mixture';
import { anomalyMapPixels, calibrateAnomaly, modelFromScores, scoreImage, type AnomalyCalibration, type AnomalyModel, type AnomalyScore, type ImageAnomalies } from './model/anomaly';
import { addGaussianNoise, denoiseImage, estimateNoiseSigma, type DenoiseEstimator } from './model/denoise';
import { ANOMALY_RATE, ANOMALY_SCORES, DENOISE_ESTIMATORS, DENOISE_SIGMA, DENOISE_STEP } from './model/limits';

// ---- re-exports: what callers need, from one place ----
export * from './vocabulary';
export { train, assign, assignSync, createRng, sharedVectors, shutdownEngineWorkers, threadBudget, EngineError } from './training';
export { prestartEngineWorkers } from './parallel/worker-pool';
export type { Assignment, IterationStat, TrainOptions, TrainProgress, TrainResult, TrainedCodebook } from './training';
export { ShardState, SearchCrew, distancesToNewest, shardLayout, type ShardLayout } from './training';
export type { CellMember, SeedChoice, SeedStep, ShardAssignment, ShardExecutor, ShardMove, ShardSplitSums, ShardSums, SplitRequest } from './training';
export type { EcvqPassRequest, EcvqShardPass, EcvqShards, TreeShards } from './training';
export { EngineInputError, type EngineInputErrorCode } from './input-error';
export {
  assignEcvq, ecvqStartingCodebook, sweepEcvq, trainEcvq, MAX_ECVQ_SIZE, type EcvqIterationStat, type EcvqOptions, type EcvqResult, type EcvqStartOptions,
  type EcvqStop,
} from './training/ecvq';
export {
  BitReader, BitWriter, canonicalCode, codedBits, decodeSymbols, encodeSymbols, HuffmanDecoder, huffmanCodeLengths, kraftSum, MAX_CODE_LENGTH,
  type CanonicalCode,
} from './core/huffman';
export {
  CODEBOOK_FORMAT, CODEBOOK_VERSION, CODEBOOK_VERSIONS, structureFromInfo, structureInfo, structureSchema, type StructureInfo, FLOAT32_MAX, MAX_BITS, MAX_ITERATIONS, MAX_SIZE, MAX_SOURCE_LENGTH, MAX_TRACE_LENGTH, codebookDocumentSchema, makeCodebook, parseCodebook, parseCodebookJson,
  serializeCodebook, toCodebookDocument, type Codebook, type CodebookDocument, type PatchInfo, type PreprocessingInfo, type TrainingInfo,
} from './format/codebook-schema';
export { codebookJsonSchemaText } from './format/codebook-json-schema';
export { codewordChecksum } from './format/checksum';
export { STRUCTURE_KINDS, type CodebookStructure, type EntropyConstrainedStructure, type FullStructure, type ResidualStructure, type StructureKind, type TreeStructure } from './structures/types';
export { stageOffsets, structureProblems, treeShape } from './format/structure-check';
export {
  readContainer,
  readContainerHeader,
  writeContainer,
  payloadLayout,
  CONTAINER_VERSION,
  HEADER_BYTES,
  MAX_RESYNC_ROWS,
  PAYLOAD_CHOICES,
  RESYNC_MARKER_BYTES,
  type ContainerHeader,
  type ContainerOptions,
  type PayloadChoice,
} from './format/container';
export { encodeImage, reconstruct, reconstructOnThreads, type EncodedImage } from './format/codec';
export { rawContainerBytes, rawSetBytes, type RawGeometry, type VariableIndexStream } from './format/raw-size';
export { fixedRateBits } from './format/index-coding';
export { decodeImage, decodeImageForCoding, decodedImageBytes, readImageSize, fromRgb8, toUint8, channelsOf, IMAGE_EXTENSIONS, type CodableImage, type ColorMode, type PixelImage } from './io/image';
export { lumaBt601, lumaPlane, BT601_WEIGHTS } from './io/luma';
export {
  parsePatchShape, checkPatchShape, tile, untile, extractTrainingVectors, patchPositions, vectorDimension, type PatchShape, type TrainingImageSource,
} from './io/patches';
export { MemoryBudget, formatBytes } from './memory/budget';
export { trainingMemory, type TrainingMemory, type TrainingMemoryInput } from './memory/training-memory';
export { checkMeanBits, quantizeMean, meanLevel, removeMeans, MEAN_BITS_MIN, MEAN_BITS_MAX, type Preprocessing } from './io/mean-removal';
export { readNpy, writeNpy, writeNpyArray, type NpyMatrix, type NpyWritable } from './io/npy';
export { indexMapNpy, meanCodesNpy } from './format/index-map';
export { writeZip, type ZipEntry } from './io/zip';
export { encodePng, encodeErrorMapPng, errorMap, ERROR_MAP_GAIN } from './io/png';
export { meanSquaredError, psnrFromMse, psnrForJson, formatPsnr } from './metrics/distortion';
export { tileErrors, type TileError } from './metrics/tile-error';
export { poolSsim, ssimGrey, ssimOfImages } from './metrics/ssim';
export {
  curveCsv, imageEvaluationCsv, readCurveCsv, runCurveCsv, runMetricsCsv, csvNumber, csvPsnr, csvText, CURVE_CSV_COLUMNS, IMAGE_CSV_COLUMNS, type CurveCsvPoint,
  type ImageCsvRow,
} from './metrics/evaluation-csv';
export { evaluationMatrixCsv, MATRIX_CSV_COLUMNS, type MatrixCsvRow } from './metrics/evaluation-csv';
export { readCsv, writeCsv, csvField, CSV_LINE_END } from './io/csv';
export { bppFixed, entropyBits, indexBits } from './metrics/rate';
export { availableBaselineCodecs, canEncodeAvif, DEFAULT_QUALITIES, BASELINE_CODECS, type BaselineCodec, type BaselinePoint } from './metrics/baselines';
export type { ImageEvaluation, ImageSetEvaluation, VectorSetEvaluation, RateDistortion, MeasuredFigures } from './metrics/evaluate';
export { measuredFigures, measureImage, poolImageMeasurements, type ImageMeasurement } from './metrics/evaluate';
export { bdMissingReason, bdSummary, bjontegaard, BdRateError, emptyBdSummary, type BdResult, type BdSummary, type RdPoint } from './metrics/bd-rate';
export { bdAgainstCodecs, bdTableCsv, BD_TABLE_CSV_COLUMNS, type BdTableRow, type CurveRate } from './metrics/bd-table';
export { structureSteps, stepRangeOf, type StepKind, type StructureStep, type StructureSteps } from './metrics/structure-steps';
export {
  fixedPointTable, fixedPointTableBytes, withFixedPointCodewords, RESIDUAL_WIDTHS, decoderCost, structureTableBytes,
  type CostedCodebook, type DecoderCost, type FirmwareTableCost, type OperationCounts, type BundleFile, type FirmwareBundle, type FixedPointTable, type ResidualWidth, type RoundingCost, type RoundingCostImage,
} from './firmware';

// ---- entry validation ----
const int = (min: number, max?: number) => (max === undefined ? z.int().min(min) : z.int().min(min).max(max));
const colorSchema = z.enum(COLOR_MODES);
const patchShapeSchema = z.object({ width: int(PATCH_SIDE.min, PATCH_SIDE.max), height: int(PATCH_SIDE.min, PATCH_SIDE.max) });
const preprocessingSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('none') }),
  z.object({ kind: z.literal('mean-removed'), meanBits: int(1, MEAN_BITS.max) }),
]);
const threadsSchema = int(1, 1024).optional();
const signalSchema = z.instanceof(AbortSignal).optional();

function check<T>(schema: z.ZodType<T>, value: unknown, what: string): T {
  const parsed = schema.safeParse(value);
  if (parsed.success) return parsed.data;
  const [issue] = parsed.error.issues;
  const field = issuePath(issue.path);
  throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${what}: ${field === '(root)' ? '' : `${field}: `}${issue.message}`, field);
}

// ---- images and vectors ----

export async function loadImage(input: Buffer | string, color: ColorMode, name?: string): Promise<PixelImage> {
  check(colorSchema, color, 'loadImage');
  return decodeImage(input, color, name);
}

export async function loadNpy(path: string): Promise<NpyMatrix> {
  let bytes: Buffer;
  try {
    bytes = await readFile(path);
  } catch (error) {
    throw new EngineInputError('ENGINE_INVALID_NPY', `${path}: cannot read file (${(error as NodeJS.ErrnoException).code ?? String(error)})`);
  }
  return readNpy(bytes, path);
}

const extractSchema = z.object({
  patch: patchShapeSchema,
  stride: int(1).optional(),
  // Any cap of at least one vector: the vocabulary's VECTOR_CAP is the studio's and the CLI's policy on top.
  sample: int(1).optional(),
  seed: int(SEED.min, SEED.max).optional(),
  preprocessing: preprocessingSchema.optional(),
});
export type TrainingVectorOptions = z.infer<typeof extractSchema>;

/**
 * Training vectors from images: patches at `stride` (default: patch size), an optional seeded random cap spread over images
 * by area, and — with mean removal — the quantized block mean subtracted exactly as the encoder will.
 * @returns vectors: N × d, row-major
 */
export function imagesToTrainingVectors(images: PixelImage[], options: TrainingVectorOptions): { vectors: Float32Array; dimension: number; count: number; perImage: number[] } {
  const o = check(extractSchema, options, 'imagesToTrainingVectors');
  const rng = createRng(o.seed ?? DEFAULT_SEED);
  const out = extractTrainingVectors(images, o.patch, { stride: o.stride, sample: o.sample, rng });
  if (o.preprocessing?.kind === 'mean-removed') removeMeans(out.vectors, out.dimension, o.preprocessing.meanBits);
  return out;
}

const streamSchema = extractSchema.extend({ color: colorSchema, allocate: z.function().optional(), signal: signalSchema });
export type StreamTrainingVectorOptions = TrainingVectorOptions & {
  color: ColorMode;
  /** Makes the N × d output (e.g. charged to a MemoryBudget, in shared memory); default a plain Float32Array. */
  allocate?: (length: number) => Float32Array;
  signal?: AbortSignal;
};

/**
 * imagesToTrainingVectors with the images decoded one at a time, as `sources` hand them out: the same vectors for the
 * same images and seed, while at most one decoded image is held (each source's sizes decide the sample beforehand).
 * @returns vectors: N × d, row-major
 */
export async function streamImagesToTrainingVectors(
  sources: TrainingImageSource[],
  options: StreamTrainingVectorOptions,
): Promise<{ vectors: Float32Array; dimension: number; count: number; perImage: number[] }> {
  const o = check(streamSchema, options, 'streamImagesToTrainingVectors');
  const rng = createRng(o.seed ?? DEFAULT_SEED);
  const out = await streamTrainingVectors(sources, o.patch, {
    channels: channelsOf(o.color),
    stride: o.stride,
    sample: o.sample,
    rng,
    allocate: options.allocate,
    signal: options.signal,
  });
  if (o.preprocessing?.kind === 'mean-removed') removeMeans(out.vectors, out.dimension, o.preprocessing.meanBits);
  return out;
}

// ---- training ----

const trainSchema = z
  .object({
    bits: int(0, MAX_BITS).optional(),
    size: int(1, 2 ** MAX_BITS).optional(),
    init: initMethodSchema,
    epsilon: z.number().min(EPSILON.min).max(EPSILON.max).optional(),
    // The format records the trace of every pass, so training stops at what a document may hold.
    maxIterations: int(ITERATIONS.min, MAX_ITERATIONS).optional(),
    seed: int(SEED.min, SEED.max).optional(),
    threads: threadsSchema,
    signal: signalSchema,
    onProgress: z.function().optional(),
    onIteration: z.function().optional(),
    patch: z.object({ width: int(PATCH_SIDE.min, PATCH_SIDE.max), height: int(PATCH_SIDE.min, PATCH_SIDE.max), channels: z.union([z.literal(1), z.literal(3)]), color: colorSchema }).nullable(),
    preprocessing: preprocessingSchema,
    source: z.string().max(MAX_SOURCE_LENGTH),
    stride: int(1).optional(),
    sample: int(1).optional(),
  })
  .refine((o) => (o.bits === undefined) !== (o.size === undefined), { message: 'give exactly one of bits and size', path: ['bits'] });

export interface TrainCodebooksOptions {
  /** Codebook of 2^bits codewords (0..14) — or give `size` for any K. */
  bits?: number;
  size?: number;
  init: InitMethod;
  epsilon?: number;
  maxIterations?: number;
  seed?: number;
  threads?: number;
  signal?: AbortSignal;
  onProgress?: (p: TrainProgress) => void;
  onIteration?: (s: IterationStat) => void;
  /** Geometry the vectors came from, or null for raw vectors. */
  patch: PatchInfo | null;
  preprocessing: PreprocessingInfo;
  /** Recorded in the codebook: what it was trained on. */
  source: string;
  stride?: number;
  sample?: number;
}

/**
 * Trains codebooks with the generalized Lloyd algorithm. Split init returns every size 1, 2, 4, …, K (each trace holding
 * the whole LBG path up to that size); random and k-means++ return one codebook.
 * @param vectors  N × dimension, row-major (already mean-removed when `preprocessing` says so)
 */
export async function trainCodebooks(vectors: Float32Array, dimension: number, options: TrainCodebooksOptions): Promise<Codebook[]> {
  const o = check(trainSchema, options, 'trainCodebooks');
  if (o.patch && vectorDimension(o.patch, o.patch.channels) !== dimension) {
    throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', `vectors have ${dimension} components, a ${o.patch.width}×${o.patch.height} ${o.patch.color} patch has ${vectorDimension(o.patch, o.patch.channels)}`);
  }
  if (o.patch && o.patch.channels !== (o.patch.color === 'rgb' ? 3 : 1)) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `trainCodebooks: patch.channels does not match color ${o.patch.color}`);
  }
  const k = o.size ?? 2 ** o.bits!;
  const seed = o.seed ?? DEFAULT_SEED;
  const epsilon = o.epsilon ?? DEFAULT_EPSILON;
  const result = await train(vectors, dimension, {
    k,
    init: o.init,
    epsilon,
    maxIterations: o.maxIterations,
    seed,
    threads: o.threads,
    signal: options.signal,
    onProgress: options.onProgress,
    onIteration: options.onIteration,
  });
  const path: IterationStat[] = [];
  return result.codebooks.map((book) => {
    for (const s of book.trace) {
      const entry: IterationStat = { size: s.size, iteration: s.iteration, distortion: s.distortion, emptyRepaired: s.emptyRepaired, elapsedMs: s.elapsedMs };
      if (s.redecided !== undefined) entry.redecided = s.redecided;
      path.push(entry);
    }
    const training: TrainingInfo = {
      source: o.source,
      vectorCount: result.vectorCount,
      init: o.init,
      epsilon,
      seed,
      iterations: book.iterations,
      distortion: book.distortion,
      trace: [...path],
      maxIterations: o.maxIterations ?? DEFAULT_MAX_ITERATIONS,
      ...(o.stride !== undefined ? { stride: o.stride } : {}),
      ...(o.sample !== undefined ? { sample: o.sample } : {}),
    };
    return makeCodebook({ size: book.size, dimension, patch: o.patch, preprocessing: o.preprocessing, codewords: book.codewords, usage: book.usage, training });
  });
}

// ---- entropy-constrained training ----

const ecvqSchema = z.object({
  lambdas: z.array(z.number().min(LAMBDA.min).max(LAMBDA.max)).min(1).max(MAX_LAMBDAS),
  maxCodeLength: int(1, MAX_CODE_LENGTH).optional(),
});

export interface TrainEntropyConstrainedOptions extends Omit<TrainCodebooksOptions, 'size' | 'onIteration'> {
  /** The starting full-search codebook has 2^bits codewords: the most any λ keeps. */
  bits: number;
  /** One codebook per λ, in this order (λ: squared error per vector traded for one index bit). */
  lambdas: number[];
  /** Longest Huffman code, 1..16 (default 16). */
  maxCodeLength?: number;
  onLambda?: (done: number, total: number, lambda: number) => void;
}

/**
 * Entropy-constrained codebooks (training/ecvq.ts): a full-search codebook of 2^bits codewords trained as
 * trainCodebooks does, then one ECVQ training from it per λ. Each codebook keeps the cells its λ leaves used, with the
 * canonical Huffman lengths of its training usage in its structure.
 * @param vectors N × dimension, row-major (already mean-removed when `preprocessing` says so)
 */
export async function trainEntropyConstrained(vectors: Float32Array, dimension: number, options: TrainEntropyConstrainedOptions): Promise<Codebook[]> {
  const { lambdas, maxCodeLength, onLambda, ...rest } = options;
  check(ecvqSchema, { lambdas, maxCodeLength }, 'trainEntropyConstrained');
  const [start] = (await trainCodebooks(vectors, dimension, rest)).slice(-1);
  const out: Codebook[] = [];
  for (const [i, lambda] of lambdas.entries()) {
    onLambda?.(i, lambdas.length, lambda);
    const r = await trainEcvq(vectors, dimension, start.codewords, {
      lambda, epsilon: start.training.epsilon, maxIterations: start.training.maxIterations, maxCodeLength, signal: options.signal,
    });
    const training: TrainingInfo = {
      ...start.training,
      iterations: r.iterations,
      distortion: r.distortion,
      trace: r.trace.map((t) => ({ size: t.size, iteration: t.iteration, distortion: t.distortion, emptyRepaired: t.emptied, elapsedMs: t.elapsedMs })),
    };
    out.push(makeCodebook({
      size: r.size, dimension, patch: start.patch, preprocessing: start.preprocessing, codewords: r.codewords, usage: r.usage, training,
      structure: { kind: 'entropy-constrained', lambda, codeLengths: r.codeLengths },
    }));
  }
  onLambda?.(lambdas.length, lambdas.length, lambdas.at(-1)!);
  return out;
}

// ---- tree-structured and residual training ----

export interface TrainStructuredCodebookOptions extends Omit<TrainCodebooksOptions, 'bits' | 'size' | 'onIteration' | 'onProgress'> {
  /** Called after every split (tree) or every stage and refinement step (residual) with the training MSE so far. */
  onStep?: (p: { step: number; distortion: number }) => void;
}

/** What trainTreeCodebook returns: the codebook and its two training distortions (tree search, full search over the leaves). */
export interface TrainedTree {
  codebook: Codebook;
  /** Mean path length on the training vectors, bits per block. */
  rate: number;
  treeDistortion: number;
  fullSearchDistortion: number;
}

/** The trace a structured codebook records: one entry per step, the last ones kept when the format's cap is reached. */
/** A structured codebook's steps (growth, pruning, stages) as its training trace, capped at what the format records (the last ones kept). */
export function structuredTrace(steps: readonly { size: number; distortion: number }[], tableSize: number, maxIterations: number): IterationStat[] {
  const cap = maxTraceLength(tableIndexBits(tableSize), maxIterations);
  return steps.slice(-cap).map((t) => ({ size: Math.max(1, Math.min(t.size, MAX_SIZE)), iteration: 0, distortion: t.distortion, emptyRepaired: 0, elapsedMs: 0 }));
}

function structuredPatch(options: TrainStructuredCodebookOptions, dimension: number): void {
  if (options.patch && vectorDimension(options.patch, options.patch.channels) !== dimension) {
    throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', `vectors have ${dimension} components, a ${options.patch.width}×${options.patch.height} ${options.patch.color} patch has ${vectorDimension(options.patch, options.patch.channels)}`);
  }
}

/**
 * A tree-structured codebook (structures/tree.ts): balanced to depth b, or greedy-grown and optionally pruned. The table
 * holds every node (the encoder descends through them), usage counts the training vectors reaching each node, and the
 * trace is the growth (one entry per level or split: leaves and tree-search MSE).
 * @param vectors N × dimension, row-major (already mean-removed when `preprocessing` says so)
 */
export async function trainTreeCodebook(
  vectors: Float32Array, dimension: number, options: TrainStructuredCodebookOptions & { growth: TreeGrowth; prune?: { rate: number } },
): Promise<TrainedTree> {
  structuredPatch(options, dimension);
  const most = options.growth.kind === 'balanced' ? 2 ** (options.growth.depth + 1) - 1 : 2 * (options.growth.leaves ?? MAX_SIZE) - 1;
  if (options.growth.kind === 'balanced' && most > MAX_SIZE) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `a balanced tree of depth ${options.growth.depth} has ${most} nodes; a codebook table holds at most ${MAX_SIZE} (depth ≤ ${MAX_BITS - 1})`);
  }
  const seed = options.seed ?? DEFAULT_SEED;
  const epsilon = options.epsilon ?? DEFAULT_EPSILON;
  const maxIterations = options.maxIterations ?? DEFAULT_MAX_ITERATIONS;
  let step = 0;
  const r = await trainTree(vectors, dimension, {
    growth: options.growth, prune: options.prune, seed, epsilon, maxIterations, signal: options.signal,
    onProgress: (p) => options.onStep?.({ step: ++step, distortion: p.distortion }),
  });
  const size = r.codewords.length / dimension;
  if (size > MAX_SIZE) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `the grown tree has ${size} nodes; a codebook table holds at most ${MAX_SIZE}`);
  const steps = [...r.growth, ...(r.pruning ?? []).slice(1)].map((g) => ({ size: g.leaves, distortion: g.distortion }));
  const training: TrainingInfo = {
    source: options.source, vectorCount: vectors.length / dimension, init: options.init, epsilon, seed,
    // The sum over every node's 2-means, capped at what the format records.
    iterations: Math.min(r.iterations, MAX_ITERATIONS),
    distortion: r.treeDistortion,
    trace: structuredTrace(steps, size, maxIterations),
    maxIterations,
    ...(options.stride !== undefined ? { stride: options.stride } : {}),
    ...(options.sample !== undefined ? { sample: options.sample } : {}),
  };
  const codebook = makeCodebook({
    size, dimension, patch: options.patch, preprocessing: options.preprocessing, codewords: r.codewords, usage: r.usage, training, structure: r.structure,
  });
  return { codebook, rate: r.rate, treeDistortion: r.treeDistortion, fullSearchDistortion: r.fullSearchDistortion };
}

/**
 * A residual (multistage) codebook (structures/residual.ts): stages of 2^{b_s} codewords trained in turn on the earlier
 * stages' residuals, optional joint refinement passes, searched greedily or by M-best. Usage counts, per table entry,
 * the training vectors whose code names it under the codebook's search; the trace has one entry per stage (table
 * codewords so far, greedy MSE) and per refinement step (whole table, MSE under the search).
 * @param vectors N × dimension, row-major (already mean-removed when `preprocessing` says so)
 */
export async function trainResidualCodebook(
  vectors: Float32Array, dimension: number, options: TrainStructuredCodebookOptions & { stageBits: number[]; search?: ResidualSearch; refinementPasses?: number },
): Promise<{ codebook: Codebook; greedyDistortion: number; distortion: number }> {
  structuredPatch(options, dimension);
  const seed = options.seed ?? DEFAULT_SEED;
  const epsilon = options.epsilon ?? DEFAULT_EPSILON;
  const maxIterations = options.maxIterations ?? DEFAULT_MAX_ITERATIONS;
  let step = 0;
  const r = await trainResidual(vectors, dimension, {
    bits: options.stageBits, init: options.init, search: options.search, refinementPasses: options.refinementPasses, seed, epsilon, maxIterations,
    threads: options.threads, signal: options.signal, onProgress: (p) => options.onStep?.({ step: ++step, distortion: p.distortion }),
  });
  const size = r.tableCodewords;
  const codes = encodeResidual(r.codewords, r.structure, vectors, dimension);
  const usage = new Uint32Array(size);
  let offset = 0;
  codes.indices.forEach((stage, s) => {
    for (const j of stage) usage[offset + j] += 1;
    offset += 2 ** options.stageBits[s];
  });
  let tableSoFar = 0;
  const steps = [
    ...r.stages.map((st) => ({ size: (tableSoFar += 2 ** st.bits), distortion: st.distortion })),
    ...r.refinement.map((st) => ({ size, distortion: st.kept ? st.after : st.before })),
  ];
  const training: TrainingInfo = {
    source: options.source, vectorCount: vectors.length / dimension, init: options.init, epsilon, seed,
    iterations: Math.min(r.stages.reduce((a, st) => a + st.iterations, 0), MAX_ITERATIONS),
    distortion: r.distortion,
    trace: structuredTrace(steps, size, maxIterations),
    maxIterations,
    ...(options.stride !== undefined ? { stride: options.stride } : {}),
    ...(options.sample !== undefined ? { sample: options.sample } : {}),
  };
  const codebook = makeCodebook({
    size, dimension, patch: options.patch, preprocessing: options.preprocessing, codewords: r.codewords, usage, training, structure: r.structure,
  });
  return { codebook, greedyDistortion: r.greedyDistortion, distortion: r.distortion };
}

// ---- coding ----

const codingSchema = z.object({
  threads: threadsSchema,
  signal: signalSchema,
  callerThread: z.boolean().optional(),
  payload: z.enum(PAYLOAD_CHOICES).optional(),
  resyncRows: z.number().int().min(0).max(MAX_RESYNC_ROWS).optional(),
});

type CodingOptions = { threads?: number; signal?: AbortSignal; callerThread?: boolean } & ContainerOptions;

/**
 * Codes an image into container bytes, without decoding it again (what a command that writes only the coded file
 * needs). `callerThread` lets the calling thread search too (a command-line process; see parallel/encode-search.ts).
 */
export async function encodeToContainer(codebook: Codebook, image: CodableImage, options: CodingOptions = {}): Promise<{ container: Buffer; encoded: EncodedImage }> {
  check(codingSchema, options, 'encode');
  const encoded = await encodeImage(codebook, image, options);
  return { container: writeContainer(codebook, encoded, { payload: options.payload, resyncRows: options.resyncRows }), encoded };
}

/**
 * Codes an image: the container bytes, the indices, and the decoder's output (height × width × channels, 8-bit).
 * `payload` and `resyncRows` choose how the container stores the payload (ContainerOptions; default: the smallest, no markers).
 */
export async function encode(
  codebook: Codebook,
  image: PixelImage,
  options: CodingOptions = {},
): Promise<{ container: Buffer; encoded: EncodedImage; reconstruction: Uint8Array }> {
  const { container, encoded } = await encodeToContainer(codebook, image, options);
  return { container, encoded, reconstruction: reconstruct(codebook, encoded) };
}

/** Decodes container bytes with the codebook they were coded with. */
export function decode(codebook: Codebook, bytes: Uint8Array): { width: number; height: number; channels: 1 | 3; pixels: Uint8Array } {
  const encoded = readContainer(codebook, bytes);
  return { width: encoded.width, height: encoded.height, channels: encoded.header.color === 'rgb' ? 3 : 1, pixels: reconstruct(codebook, encoded) };
}

/**
 * decode's image, written by this thread and the engine's worker threads together when it is large
 * (format/codec.ts reconstructOnThreads); `threads` counts this thread (default: the thread budget's total).
 */
export async function decodeOnThreads(
  codebook: Codebook, bytes: Uint8Array, options: { threads?: number; signal?: AbortSignal; callerThread?: boolean } = {},
): Promise<{ width: number; height: number; channels: 1 | 3; pixels: Uint8Array }> {
  const encoded = readContainer(codebook, bytes);
  const pixels = await reconstructOnThreads(codebook, encoded, options);
  return { width: encoded.width, height: encoded.height, channels: encoded.header.color === 'rgb' ? 3 : 1, pixels };
}

// ---- firmware export ----

const firmwareSchema = z.object({ residual: z.enum(RESIDUAL_WIDTHS).optional() });

/**
 * The C firmware bundle of a codebook (server/engine/firmware): fixed-point table, reference decoder, example, README.
 * `residual` stores a mean-removed codebook's residuals as int16 (default) or int8; plain codebooks are uint8.
 */
export function firmwareBundle(codebook: Codebook, options: { residual?: (typeof RESIDUAL_WIDTHS)[number] } = {}): FirmwareBundle {
  check(firmwareSchema, options, 'firmwareBundle');
  return buildFirmwareBundle(codebook, options.residual);
}

/** The firmware bundle as one zip archive of stored files (the same files `cellwright export --target c` writes), dated `modified`. */
export function firmwareZip(codebook: Codebook, options: { residual?: (typeof RESIDUAL_WIDTHS)[number]; modified?: Date } = {}): Buffer {
  check(firmwareSchema.extend({ modified: z.date().optional() }), options, 'firmwareZip');
  return writeZip(buildFirmwareBundle(codebook, options.residual).files.map((f) => ({ name: f.name, data: f.text })), options.modified);
}

/** The PSNR cost of a firmware table's rounding on images: each coded once, decoded with float and fixed-point codewords. */
export async function fixedPointCost(codebook: Codebook, table: FixedPointTable, images: PixelImage[], options: { threads?: number; signal?: AbortSignal } = {}): Promise<RoundingCost> {
  check(z.object({ threads: threadsSchema, signal: signalSchema }), options, 'fixedPointCost');
  return measureFixedPointCost(codebook, table, images, options);
}

// ---- channel errors ----

export {
  BER, CHANNEL_SEEDS, DEFAULT_BERS, DEFAULT_REORDER_BER, EXPECTED_MAX_BITS, MAX_BERS, REORDER_MAX_BITS, STUDIO_REORDER_MAX_BITS, channelDistortion, concealIndex, decodeDamaged, flipBits,
  popcount, transitionByDistance, type ChannelCurve, type ChannelPoint, type IndexAssignment,
} from './channel';

const berSchema = z.number().min(BER.min).max(BER.max);
const channelSchema = z.object({
  bers: z.array(berSchema).min(1).max(MAX_BERS).optional(),
  seeds: int(CHANNEL_SEEDS.min, CHANNEL_SEEDS.max).optional(),
  seed: int(SEED.min, SEED.max).optional(),
  resyncRows: int(0, MAX_RESYNC_ROWS).optional(),
  threads: threadsSchema,
  signal: signalSchema,
});
export type ChannelOptions = z.infer<typeof channelSchema>;

/**
 * PSNR against bit-error rate on images (server/engine/channel): each image coded once (raw payload, markers every
 * `resyncRows` block rows), its payload sent through a binary symmetric channel `seeds` times per rate and decoded,
 * with the closed-form expected MSE beside the measured one. Defaults: DEFAULT_BERS, CHANNEL_SEEDS.default, seed 0, no markers.
 */
export async function channelCurve(codebook: Codebook, images: PixelImage[], options: ChannelOptions = {}): Promise<ChannelCurve> {
  const o = check(channelSchema, options, 'channelCurve');
  if (images.length === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'channelCurve: no images');
  const coded = [];
  for (const image of images) coded.push({ image, encoded: await encodeImage(codebook, image, { threads: o.threads, signal: o.signal }) });
  return simulateChannel(codebook, coded, {
    bers: o.bers ?? DEFAULT_BERS, seeds: o.seeds ?? CHANNEL_SEEDS.default, seed: o.seed ?? 0, resyncRows: o.resyncRows ?? 0, signal: o.signal,
  });
}

/**
 * Index assignment for a noisy channel (binary switching; server/engine/channel/index-assignment.ts): a new codebook
 * with the same codewords in the order that lowers the expected channel distortion at bit-error rate `ber`.
 */
export function reorderCodebook(codebook: Codebook, options: { ber?: number } = {}): IndexAssignment {
  const o = check(z.object({ ber: berSchema.optional() }), options, 'reorderCodebook');
  if (codebook.bits > REORDER_MAX_BITS) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `index assignment is offered up to ${REORDER_MAX_BITS} index bits (${2 ** REORDER_MAX_BITS} codewords); this codebook has ${codebook.size}`, 'codebook');
  }
  return assignIndices(codebook, o.ber ?? DEFAULT_REORDER_BER);
}

// ---- evaluation and baselines ----

const evaluateSchema = z.object({ threads: threadsSchema, signal: signalSchema, keepOutputs: z.boolean().optional(), onImage: z.function().optional() });

export interface EvaluateOptions {
  threads?: number;
  signal?: AbortSignal;
  keepOutputs?: boolean;
  onImage?: (done: number, total: number) => void;
}

/** Rate and distortion of a codebook on held-out images (per image and pooled), or on raw vectors (N × d). */
export async function evaluate(codebook: Codebook, input: PixelImage[], options?: EvaluateOptions): Promise<ImageSetEvaluation>;
export async function evaluate(codebook: Codebook, input: { vectors: Float32Array; dimension: number }, options?: EvaluateOptions): Promise<VectorSetEvaluation>;
export async function evaluate(codebook: Codebook, input: PixelImage[] | { vectors: Float32Array; dimension: number }, options: EvaluateOptions = {}): Promise<ImageSetEvaluation | VectorSetEvaluation> {
  check(evaluateSchema, options, 'evaluate');
  if (Array.isArray(input)) return evaluateImages(codebook, input, options);
  return evaluateVectors(codebook, input.vectors, input.dimension, options);
}

const baselineSchema = z.object({
  codecs: z.array(z.enum(['jpeg', 'webp', 'avif'])).min(1).optional(),
  qualities: z.array(int(1, 100)).min(1).optional(),
  signal: signalSchema,
  onPoint: z.function().optional(),
});

/** Rate–distortion points of JPEG, WebP (and AVIF where this sharp build writes it) on the same images, measured the same way. */
export async function baselines(
  images: PixelImage[],
  options: { codecs?: BaselineCodec[]; qualities?: number[]; signal?: AbortSignal; onPoint?: (done: number, total: number) => void } = {},
): Promise<BaselinePoint[]> {
  check(baselineSchema, options, 'baselines');
  return baselineCurve(images, options);
}


// ---- the codebook as a model of its training patches (model/README.md) ----

export { ZERO_USAGE_WEIGHT, VARIANCE_FLOOR, VARIANCE_PSEUDO_VECTORS, logSumExp, type PatchMixture, type VectorScores } from './model/mixture';
export type { VarianceSource };
export { empiricalQuantile, falseAlarmThreshold, countAbove } from './model/threshold';
export { rankBlocks, type AnomalyCalibration, type AnomalyModel, type AnomalyScore, type BlockScore, type ImageAnomalies, type RankedBlock } from './model/anomaly';
export { MAD_GAUSSIAN, patchEstimator, patchOrigins, type DenoiseEstimator } from './model/denoise';
export { ANOMALY_RATE, ANOMALY_SCORES, DENOISE_ESTIMATORS, DENOISE_SIGMA, DENOISE_STEP, MODEL_CAUTION } from './model/limits';

const vectorsOf = (dimension: number, what: string) =>
  z.instanceof(Float32Array).refine((v) => v.length % dimension === 0, { message: `${what}: expected a multiple of the codebook's dimension ${dimension} values` });

/**
 * The codebook's mixture (one isotropic Gaussian per codeword, model/mixture.ts). `trainingVectors` (N × d, in the
 * codebook's vector domain, e.g. from codebookTrainingVectors) or `cellDistortion` (K summed squared errors per cell on
 * the training vectors, as the studio stores them for trained codebooks) give per-cell variances; without either every
 * cell takes the codebook's pooled training distortion.
 */
export function codebookMixture(codebook: Codebook, options: { trainingVectors?: Float32Array; cellDistortion?: ArrayLike<number> } = {}): PatchMixture {
  const cells = z.array(z.number().min(0)).length(codebook.size, { message: `expected ${codebook.size} values (one per codeword)` });
  check(z.object({ trainingVectors: vectorsOf(codebook.dimension, 'trainingVectors').optional(), cellDistortion: cells.optional() }), { ...options, cellDistortion: options.cellDistortion && Array.from(options.cellDistortion) }, 'codebookMixture');
  return mixtureOf(codebook, options.trainingVectors, options.cellDistortion);
}

/** A mixture worked out before (its variances, their source and the pooled figure, kept), rebuilt for the same codebook. */
export function restoreMixture(codebook: Codebook, saved: { variances: ArrayLike<number>; varianceSource: VarianceSource; pooledVariance: number }): PatchMixture {
  const schema = z.object({
    variances: z.array(z.number().positive()).length(codebook.size, { message: `expected ${codebook.size} values (one per codeword)` }),
    varianceSource: z.enum(['training-vectors', 'cell-distortion', 'stored-distortion']),
    pooledVariance: z.number().positive(),
  });
  const o = check(schema, { ...saved, variances: Array.from(saved.variances) }, 'restoreMixture');
  return mixtureWithVariances(codebook, Float64Array.from(o.variances), o.varianceSource, o.pooledVariance);
}

/** Nearest codeword, squared distance and negative log-likelihood (nats) of each vector (N × d) under a mixture. */
export function scoreVectors(mixture: PatchMixture, vectors: Float32Array, options: { signal?: AbortSignal } = {}): VectorScores {
  check(z.object({ vectors: vectorsOf(mixture.dimension, 'vectors'), signal: signalSchema }), { vectors, ...options }, 'scoreVectors');
  return scoreMixture(mixture, vectors, options.signal);
}

/**
 * The codebook's training vectors drawn again from its training images, with the stride, vector cap and seed the
 * codebook records and its mean removal: the same vectors training used when `images` are the same images in the same
 * order (patches per image, sample draws and mean codes are all functions of those).
 * @returns vectors: N × d, row-major
 */
export function codebookTrainingVectors(codebook: Codebook, images: PixelImage[]): Float32Array {
  if (!codebook.patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook was trained on raw vectors and has no patch geometry, so it has no training images');
  const t = codebook.training;
  return imagesToTrainingVectors(images, {
    patch: { width: codebook.patch.width, height: codebook.patch.height },
    stride: t.stride,
    sample: t.sample ?? undefined,
    seed: t.seed ?? undefined,
    preprocessing: codebook.preprocessing,
  }).vectors;
}

const anomalySchema = z.object({
  rate: z.number().min(ANOMALY_RATE.min).max(ANOMALY_RATE.max).optional(),
  score: z.enum(ANOMALY_SCORES).optional(),
  signal: signalSchema,
});

/**
 * Mixture and thresholds for anomaly maps: per-cell variances and the false-alarm thresholds both measured on the
 * training vectors (N × d, the codebook's vector domain). `rate` defaults to ANOMALY_RATE.default, `score` to nll.
 */
export function anomalyModel(codebook: Codebook, trainingVectors: Float32Array, options: { rate?: number; score?: AnomalyScore; signal?: AbortSignal } = {}): AnomalyModel {
  check(anomalySchema.extend({ trainingVectors: vectorsOf(codebook.dimension, 'trainingVectors').refine((v) => v.length > 0, { message: 'no training vectors' }) }), { trainingVectors, ...options }, 'anomalyModel');
  return calibrateAnomaly(codebook, trainingVectors, options.rate ?? ANOMALY_RATE.default, options.score ?? 'nll', options.signal);
}

/**
 * A model from a mixture and its training vectors' scores kept from an earlier scoreVectors (N each): thresholds at
 * `rate` exactly as anomalyModel sets them, so one scoring of the training vectors serves every rate.
 */
export function anomalyModelFromScores(mixture: PatchMixture, trainingScores: { nll: ArrayLike<number>; distance: ArrayLike<number> }, options: { rate?: number; score?: AnomalyScore } = {}): AnomalyModel {
  check(anomalySchema, options, 'anomalyModelFromScores');
  if (trainingScores.nll.length === 0 || trainingScores.nll.length !== trainingScores.distance.length) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'anomalyModelFromScores: expected as many distances as likelihoods, at least one');
  }
  return modelFromScores(mixture, trainingScores, options.rate ?? ANOMALY_RATE.default, options.score ?? 'nll');
}

/** Scores of every coding block of a held-out image, flagged against the model's threshold. */
export function anomalyScores(codebook: Codebook, model: AnomalyModel, image: PixelImage, options: { signal?: AbortSignal } = {}): ImageAnomalies {
  check(z.object({ signal: signalSchema }), options, 'anomalyScores');
  return scoreImage(codebook, model, image, options.signal);
}

/** The heat map of an image's scores as an RGB PNG (anomalyMapPixels in model/anomaly.ts). */
export async function anomalyMapPng(image: PixelImage, result: ImageAnomalies, calibration: AnomalyCalibration): Promise<Buffer> {
  return encodePng(anomalyMapPixels(image, result, calibration), image.width, image.height, 3);
}

/** Noise σ of an image (0..255 scale) from its finest diagonal Haar coefficients (Donoho & Johnstone 1994; model/denoise.ts). */
export function estimateNoise(image: PixelImage): number {
  return estimateNoiseSigma(image);
}

/** The image with seeded Gaussian noise of standard deviation `sigma` added, clamped and rounded to 8-bit values. */
export function addNoise(image: PixelImage, sigma: number, seed: number): PixelImage {
  check(z.object({ sigma: z.number().min(DENOISE_SIGMA.min).max(DENOISE_SIGMA.max), seed: int(SEED.min, SEED.max) }), { sigma, seed }, 'addNoise');
  return addGaussianNoise(image, sigma, seed);
}

const denoiseSchema = z.object({
  sigma: z.number().min(DENOISE_SIGMA.min).max(DENOISE_SIGMA.max).optional(),
  estimator: z.enum(DENOISE_ESTIMATORS).optional(),
  step: int(DENOISE_STEP.min, DENOISE_STEP.max).optional(),
  signal: signalSchema,
});

/**
 * Denoises an image with the codebook's mixture (model/denoise.ts): overlapping patches at `step` (default 1), each
 * replaced by its nearest codeword (`hard`) or its posterior mean (`mean`, the default), averaged per pixel. Without
 * `sigma` the noise level is estimated from the image (estimateNoise).
 * @returns pixels: height × width × channels, 8-bit; and the σ used
 */
export function denoise(
  codebook: Codebook,
  mixture: PatchMixture,
  image: PixelImage,
  options: { sigma?: number; estimator?: DenoiseEstimator; step?: number; signal?: AbortSignal } = {},
): { pixels: Uint8Array; sigma: number; sigmaEstimated: boolean; patches: number } {
  const o = check(denoiseSchema, options, 'denoise');
  if (mixture.dimension !== codebook.dimension || mixture.size !== codebook.size) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'denoise: the mixture is not this codebook\'s');
  const sigma = o.sigma ?? estimateNoiseSigma(image);
  const out = denoiseImage(codebook, mixture, image, { sigma, estimator: o.estimator ?? 'mean', step: o.step ?? DENOISE_STEP.default, signal: options.signal });
  return { ...out, sigma, sigmaEstimated: o.sigma === undefined };
}

// ---- structured codebooks (issue 12): tree-structured and residual training, encoding, decoding and costs ----
export * from './structures/index';
