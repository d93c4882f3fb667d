import type { Codebook } from '../format/codebook-schema';
import { fixedRateBits } from '../format/index-coding';
import { stageOffsets } from '../format/structure-check';
import { indicesPerBlock, searchStructure } from '../format/structure-search';
import { encodeImage, reconstruct } from '../format/codec';
import { writeContainer } from '../format/container';
import { EngineInputError } from '../input-error';
import type { PixelImage } from '../io/image';
import { removeMeans } from '../io/mean-removal';
import { tile } from '../io/patches';
import { treeDistortions } from '../structures/tree';
import { psnrForJson, psnrFromMse, sumSquaredError } from './distortion';
import { entropyBits, histogram } from './rate';
import { poolSsim, ssimOfImages } from './ssim';

/**
 * Rate and distortion of a codebook on held-out data.
 * Images are measured on what the decoder outputs (8-bit, clamped, rounded) against the decoded source
 * (unrounded BT.601 luma, or 8-bit RGB). Rates, all in bits per pixel:
 *  - fixed: (ceil(log2 K) + m) / (w·h);
 *  - entropy: empirical entropy of the index stream (and of the mean codes) over the evaluated set, times blocks, per pixel —
 *    the rate an ideal entropy coder matched to these statistics would reach;
 *  - actual: container bytes × 8 / pixels, header included.
 */
export interface RateDistortion {
  pixels: number;
  blocks: number;
  mse: number; // per pixel component
  psnr: number; // dB; Infinity when mse = 0
  ssim: number | null; // null when the image is smaller than the SSIM window
  bppFixed: number;
  bppEntropy: number;
  bppActual: number;
  bytes: number;
}

/**
 * The one JSON form of a rate–distortion figure, used from the engine to the API: the command line's `eval --json`,
 * the studio's evaluation task, the stored overall figures and the API's results all carry these fields with these
 * names and units. PSNR is null for an exact reconstruction (JSON has no +∞; vocabulary EXACT.json).
 */
export interface MeasuredFigures {
  pixels: number;
  bytes: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
  bppFixed: number;
  bppEntropy: number;
  bppActual: number;
}

export function measuredFigures(r: RateDistortion): MeasuredFigures {
  return {
    pixels: r.pixels,
    bytes: r.bytes,
    mse: r.mse,
    psnr: psnrForJson(r.psnr),
    ssim: r.ssim,
    bppFixed: r.bppFixed,
    bppEntropy: r.bppEntropy,
    bppActual: r.bppActual,
  };
}

export interface ImageEvaluation extends RateDistortion {
  name: string;
  width: number;
  height: number;
  /** Only with `keepOutputs`: decoder output (height × width × channels) and the container bytes. */
  reconstruction?: Uint8Array;
  container?: Buffer;
}

export interface ImageSetEvaluation {
  kind: 'images';
  images: ImageEvaluation[];
  /** Pooled over all images: squared errors and bytes summed, SSIM averaged over images that have one. */
  overall: RateDistortion & { indexEntropy: number; meanEntropy: number };
  usage: Uint32Array; // blocks per cell, size K
  cellDistortion: Float64Array; // total squared error per cell in the vector (residual) domain, size K
  /** A tree codebook's search against a full search over its leaves on the same blocks; null for other structures. */
  treeSearch: TreeSearchFigures | null;
}

/**
 * What tree search costs on the evaluated blocks: MSE per component in the vector (residual) domain, unrounded, of the
 * tree's descent and of a full search over the same leaves (never above the tree's). The decoded image's own MSE is
 * the evaluation's `mse`.
 */
export interface TreeSearchFigures {
  treeMse: number;
  fullSearchMse: number;
}

/** Sums of squared error (tree search, full search over the leaves) and the components they cover. */
interface TreeSearchSums {
  tree: number;
  full: number;
  components: number;
}

/** Tree and full-search squared error of a tree codebook on vectors; null for other structures. */
function treeSearchSums(codebook: Codebook, vectors: Float32Array): TreeSearchSums | null {
  if (codebook.structure.kind !== 'tree') return null;
  const components = vectors.length;
  if (components === 0) return { tree: 0, full: 0, components };
  const r = treeDistortions(codebook.codewords, codebook.structure, vectors, codebook.dimension);
  return { tree: r.tree * components, full: r.fullSearch * components, components };
}

const treeFigures = (s: TreeSearchSums | null): TreeSearchFigures | null =>
  s === null ? null : { treeMse: s.components > 0 ? s.tree / s.components : 0, fullSearchMse: s.components > 0 ? s.full / s.components : 0 };

export interface VectorSetEvaluation {
  kind: 'vectors';
  vectorCount: number;
  /** Pixels one vector stands for: patch w·h when the codebook has a patch, else its dimension (rates are then per component). */
  pixelsPerVector: number;
  mse: number; // per component, unrounded reconstruction
  bppFixed: number;
  bppEntropy: number;
  indexEntropy: number;
  meanEntropy: number;
  usage: Uint32Array;
  cellDistortion: Float64Array;
  /** For a tree codebook, its search against a full search over its leaves on these vectors; else null. */
  treeSearch: TreeSearchFigures | null;
}

export interface EvaluateOptions {
  threads?: number;
  signal?: AbortSignal;
  keepOutputs?: boolean;
  onImage?: (done: number, total: number) => void;
}

/** Fixed-length rate in bits per pixel: (the structure's fixed index bits + mean bits) / pixels a block stands for. */
function bppFixedOf(codebook: Codebook, meanBits: number, pixelsPerBlock: number): number {
  return (fixedRateBits(codebook) + meanBits) / pixelsPerBlock;
}

/**
 * Empirical entropy of a block's index in bits, from per-table-entry counts: of the one index (full,
 * entropy-constrained, tree leaves), or the sum of each residual stage's own, its indices coded stage by stage.
 */
export function indexEntropyOf(codebook: Pick<Codebook, 'structure'>, usage: Uint32Array): number {
  const s = codebook.structure;
  if (s.kind !== 'residual') return entropyBits(usage);
  const { offsets } = stageOffsets(s.bits);
  return s.bits.reduce((h, b, i) => h + entropyBits(usage.subarray(offsets[i], offsets[i] + 2 ** b)), 0);
}

/** Adds each block's squared error to its cell: the block's codeword, or for residual its last stage's. */
function addCellDistortion(codebook: Codebook, indices: Uint32Array, distances: Float64Array, into: Float64Array): void {
  const per = indicesPerBlock(codebook);
  for (let i = 0; i < distances.length; i += 1) into[indices[i * per + per - 1]] += distances[i];
}

function meanBitsOf(codebook: Codebook): number {
  return codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
}

/**
 * What measuring one image contributes to a set's figures: its own figures, and the sums the set's are pooled from.
 * Plain data (typed arrays), so images can be measured on different threads or machines and pooled afterwards.
 */
export interface ImageMeasurement {
  evaluation: ImageEvaluation;
  /** Sum of squared errors over the image's pixel components, and their number. */
  sse: number;
  components: number;
  /** Blocks per cell (size K) and per mean code (2^meanBits, or 1 without mean removal). */
  usage: Uint32Array;
  meanCounts: Uint32Array;
  /** Squared error per cell in the vector (residual) domain, summed over this image's blocks (size K). */
  cellDistortion: Float64Array;
  /** A tree codebook's tree- and full-search squared error over this image's blocks; null for other structures. */
  treeSearch: TreeSearchSums | null;
}

/** Measures one image: encodes, decodes, writes the container and takes every figure of it. */
export async function measureImage(codebook: Codebook, image: PixelImage, options: EvaluateOptions = {}): Promise<ImageMeasurement> {
  if (!codebook.patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook was trained on raw vectors and has no patch geometry, so it cannot code images');
  const patchPixels = codebook.patch.width * codebook.patch.height;
  const meanBits = meanBitsOf(codebook);
  const encoded = await encodeImage(codebook, image, options);
  const recon = reconstruct(codebook, encoded);
  const container = writeContainer(codebook, encoded);
  const sse = sumSquaredError(image.pixels, recon);
  const imagePixels = image.width * image.height;
  const n = encoded.blocksX * encoded.blocksY;
  const usage = histogram(encoded.indices, codebook.size);
  const meanCounts = encoded.meanCodes ? histogram(encoded.meanCodes, 2 ** meanBits) : new Uint32Array(1);
  const imageMeanEntropy = encoded.meanCodes ? entropyBits(meanCounts) : 0;
  const cellDistortion = new Float64Array(codebook.size);
  addCellDistortion(codebook, encoded.indices, encoded.distances, cellDistortion);
  const mse = sse / image.pixels.length;
  const evaluation: ImageEvaluation = {
    name: image.name,
    width: image.width,
    height: image.height,
    pixels: imagePixels,
    blocks: n,
    mse,
    psnr: psnrFromMse(mse),
    ssim: ssimOfImages(image.pixels, recon, image.width, image.height, image.channels),
    bppFixed: bppFixedOf(codebook, meanBits, patchPixels),
    bppEntropy: ((indexEntropyOf(codebook, usage) + imageMeanEntropy) * n) / imagePixels,
    bppActual: (container.length * 8) / imagePixels,
    bytes: container.length,
  };
  if (options.keepOutputs) {
    evaluation.reconstruction = recon;
    evaluation.container = container;
  }
  let treeSearch: TreeSearchSums | null = null;
  if (codebook.structure.kind === 'tree') {
    // The blocks the encoder searched: tiled as encodeImage tiles them, less their coded means.
    const tiled = tile(image, codebook.patch);
    if (meanBits > 0) removeMeans(tiled.vectors, tiled.dimension, meanBits);
    treeSearch = treeSearchSums(codebook, tiled.vectors);
  }
  return { evaluation, sse, components: image.pixels.length, usage, meanCounts, cellDistortion, treeSearch };
}

/**
 * Pools image measurements, in the order given, into the set's figures: squared errors and bytes summed, SSIM by
 * poolSsim, entropy from the summed histograms. Every sum runs image by image in that order, so a set measured on
 * one thread and the same set measured image by image on several machines pool to the same bits.
 */
export function poolImageMeasurements(codebook: Codebook, measurements: readonly ImageMeasurement[]): ImageSetEvaluation {
  if (measurements.length === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'no images to evaluate');
  const meanBits = meanBitsOf(codebook);
  const usage = new Uint32Array(codebook.size);
  const cellDistortion = new Float64Array(codebook.size);
  const meanCounts = new Uint32Array(meanBits > 0 ? 2 ** meanBits : 1);
  let sse = 0;
  let components = 0;
  let pixels = 0;
  let blocks = 0;
  let bytes = 0;
  // Null unless every image carries its sums (a measurement passed along without them leaves the figure out).
  const tree: TreeSearchSums | null = codebook.structure.kind === 'tree' && measurements.every((m) => m.treeSearch) ? { tree: 0, full: 0, components: 0 } : null;
  for (const m of measurements) {
    if (tree && m.treeSearch) {
      tree.tree += m.treeSearch.tree;
      tree.full += m.treeSearch.full;
      tree.components += m.treeSearch.components;
    }
    for (let i = 0; i < codebook.size; i += 1) {
      usage[i] += m.usage[i];
      cellDistortion[i] += m.cellDistortion[i];
    }
    if (meanBits > 0) for (let i = 0; i < meanCounts.length; i += 1) meanCounts[i] += m.meanCounts[i];
    sse += m.sse;
    components += m.components;
    pixels += m.evaluation.pixels;
    blocks += m.evaluation.blocks;
    bytes += m.evaluation.bytes;
  }
  const results = measurements.map((m) => m.evaluation);
  const indexEntropy = indexEntropyOf(codebook, usage);
  const meanEntropy = meanBits > 0 ? entropyBits(meanCounts) : 0;
  const mse = sse / components;
  return {
    kind: 'images',
    images: results,
    overall: {
      pixels,
      blocks,
      mse,
      psnr: psnrFromMse(mse),
      ssim: poolSsim(results),
      bppFixed: bppFixedOf(codebook, meanBits, codebook.patch!.width * codebook.patch!.height),
      bppEntropy: ((indexEntropy + meanEntropy) * blocks) / pixels,
      bppActual: (bytes * 8) / pixels,
      bytes,
      indexEntropy,
      meanEntropy,
    },
    usage,
    cellDistortion,
    treeSearch: treeFigures(tree),
  };
}

export async function evaluateImages(codebook: Codebook, images: PixelImage[], options: EvaluateOptions = {}): Promise<ImageSetEvaluation> {
  if (images.length === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'no images to evaluate');
  if (!codebook.patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook was trained on raw vectors and has no patch geometry, so it cannot code images');
  const measurements: ImageMeasurement[] = [];
  for (const image of images) {
    options.signal?.throwIfAborted();
    measurements.push(await measureImage(codebook, image, options));
    options.onImage?.(measurements.length, images.length);
  }
  return poolImageMeasurements(codebook, measurements);
}

/**
 * Evaluates raw vectors (N × d, row-major), e.g. from a .npy file. The reconstruction is codeword (+ mean level) without
 * rounding, so MSE is the quantizer's own distortion per component.
 */
export async function evaluateVectors(codebook: Codebook, vectors: Float32Array, dimension: number, options: EvaluateOptions = {}): Promise<VectorSetEvaluation> {
  if (dimension !== codebook.dimension) {
    throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', `vectors have ${dimension} components, codebook has ${codebook.dimension}`);
  }
  const count = vectors.length / dimension;
  if (!Number.isInteger(count) || count < 1) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'no vectors to evaluate');
  const meanBits = meanBitsOf(codebook);
  const work = meanBits > 0 ? Float32Array.from(vectors) : vectors;
  const meanCodes = meanBits > 0 ? removeMeans(work, dimension, meanBits) : null;
  const { indices, distances } = await searchStructure(codebook, work, dimension, { threads: options.threads, signal: options.signal });
  const usage = histogram(indices, codebook.size);
  const cellDistortion = new Float64Array(codebook.size);
  addCellDistortion(codebook, indices, distances, cellDistortion);
  let sse = 0;
  for (let i = 0; i < count; i += 1) sse += distances[i];
  const pixelsPerVector = codebook.patch ? codebook.patch.width * codebook.patch.height : dimension;
  const indexEntropy = indexEntropyOf(codebook, usage);
  const meanEntropy = meanCodes ? entropyBits(histogram(meanCodes, 2 ** meanBits)) : 0;
  return {
    kind: 'vectors',
    vectorCount: count,
    pixelsPerVector,
    mse: sse / (count * dimension),
    bppFixed: bppFixedOf(codebook, meanBits, pixelsPerVector),
    bppEntropy: (indexEntropy + meanEntropy) / pixelsPerVector,
    indexEntropy,
    meanEntropy,
    usage,
    cellDistortion,
    treeSearch: treeFigures(treeSearchSums(codebook, work)),
  };
}
