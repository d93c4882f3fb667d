/**
 * Worker entry point for evaluation work: measuring codebooks on held-out images, the reference codec sweep, and the
 * reconstruction views. It takes plain data (file paths of stored originals, codebook fields and codewords) and returns
 * plain data; it never touches the database, HTTP or services, so it can run in any thread of the pool.
 */
import {
  structureFromInfo,
  type StructureInfo,
  availableBaselineCodecs,
  baselines,
  codewordChecksum,
  decodedImageBytes,
  DEFAULT_QUALITIES,
  encode,
  encodeErrorMapPng,
  encodeImage,
  indexMapNpy,
  meanCodesNpy,
  encodePng,
  measureImage,
  poolImageMeasurements,
  type ImageMeasurement,
  indexBits,
  loadImage,
  meanSquaredError,
  psnrForJson,
  measuredFigures,
  type MeasuredFigures,
  psnrFromMse,
  ssimOfImages,
  structureSteps,
  type StepKind,
  toUint8,
  type BaselineCodec,
  type MemoryBudget,
  type Codebook,
  type ColorMode,
  type PatchInfo,
  type PixelImage,
  type PreprocessingInfo,
  type TrainingInfo,
} from '../../engine';
import { taskMemory, type TaskContext } from './task-context';

/** A codebook as the worker receives it; `codewords` is K × dimension, row-major. */
export interface TaskCodebook {
  size: number;
  dimension: number;
  patch: PatchInfo;
  preprocessing: PreprocessingInfo;
  codewords: Float32Array;
  usage: ArrayLike<number>;
  training: TrainingInfo;
  /** The document's structure member (JSON form, so the task travels as plain data); absent: full search. */
  structure?: StructureInfo;
  checksum: string;
}

export interface TaskImage {
  /** Path of the stored original (content store). */
  path: string;
  /** For messages only. */
  name: string;
  /** As recorded at upload: what decoding it will hold is charged to the task's memory budget before it is decoded. */
  width: number;
  height: number;
}

/** One image's figures: the engine's one JSON form (MeasuredFigures) and the image's size. */
export interface TaskImageMetrics extends MeasuredFigures {
  width: number;
  height: number;
}

export interface EvaluateResult {
  images: TaskImageMetrics[];
  overall: MeasuredFigures;
}

export interface BaselineResultPoint {
  codec: BaselineCodec;
  quality: number;
  bpp: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
}

export type ReconstructionView = 'original' | 'reconstruction' | 'error';

export interface ReconstructResult {
  /** A PNG of every view: computed together, because the coding and SSIM behind them are the cost, not the PNGs. */
  views: Record<ReconstructionView, Uint8Array>;
  width: number;
  height: number;
  encodedBytes: number;
  bpp: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
}

/** An image's coding as NumPy files: the index map and, for a mean-removed codebook, the block mean codes. */
export interface IndexMapResult {
  indices: Uint8Array;
  means: Uint8Array | null;
  blocksX: number;
  blocksY: number;
}

/** A tree's or residual codebook's reconstruction at every step, and the PNG of step `keep` when asked for. */
export interface StructureStepsResult {
  kind: StepKind;
  steps: { step: number; indexBits: number; mse: number; psnr: number | null }[];
  png: Uint8Array | null;
}

export type EvaluateTask =
  | { op: 'measure'; codebook: TaskCodebook; images: TaskImage[] }
  | { op: 'baselines'; images: TaskImage[]; color: ColorMode; codecs?: BaselineCodec[]; qualities?: number[] }
  | { op: 'reconstruct'; codebook: TaskCodebook; image: TaskImage }
  | { op: 'index-map'; codebook: TaskCodebook; image: TaskImage }
  | { op: 'structure-steps'; codebook: TaskCodebook; image: TaskImage; keep?: number };

/** Everything runs on this worker's own thread: the pool already spends one core per task. */
const ON_THIS_THREAD = { threads: 1 } as const;

export function toCodebook(c: TaskCodebook): Codebook {
  const codewords = c.codewords instanceof Float32Array ? c.codewords : new Float32Array(c.codewords);
  // A stored codebook whose bytes no longer match its checksum must not be measured as if it were the trained one.
  if (codewordChecksum(codewords) !== c.checksum) throw new Error('stored codewords do not match their checksum');
  return {
    bits: indexBits(c.size),
    size: c.size,
    dimension: c.dimension,
    patch: c.patch,
    preprocessing: c.preprocessing,
    codewords,
    usage: Uint32Array.from(c.usage),
    training: c.training,
    structure: structureFromInfo(c.structure),
    checksum: c.checksum,
  };
}

/** Decodes one image, charging what it holds to the task's budget first (the charge stays for the task's life). */
export function loadCharged(image: TaskImage, color: ColorMode, memory: MemoryBudget): Promise<PixelImage> {
  memory.charge(decodedImageBytes(image.width, image.height, color), `decoding ${image.name} (${image.width}×${image.height} ${color})`);
  return loadImage(image.path, color, image.name);
}

async function loadAll(images: TaskImage[], color: ColorMode, memory: MemoryBudget): Promise<PixelImage[]> {
  const out: PixelImage[] = [];
  for (const image of images) out.push(await loadCharged(image, color, memory));
  return out;
}

/** Measures each image on this thread (decoded one at a time); the job pools the measurements of all its images. */
export async function measureImages(codebook: TaskCodebook, images: TaskImage[], memory: MemoryBudget): Promise<ImageMeasurement[]> {
  const book = toCodebook(codebook);
  const out: ImageMeasurement[] = [];
  for (const image of images) {
    const bytes = decodedImageBytes(image.width, image.height, codebook.patch.color);
    const decoded = await loadCharged(image, codebook.patch.color, memory);
    try {
      out.push(await measureImage(book, decoded, ON_THIS_THREAD));
    } finally {
      memory.release(bytes);
    }
  }
  return out;
}

/**
 * Per image and pooled as the engine pools them (metrics/evaluate.ts): MSE over pixel components and PSNR from it,
 * SSIM by poolSsim (pixel-weighted), rates total bits over total pixels — the same figures the command line reports,
 * from measurements taken wherever the images were measured, pooled in image order.
 */
export function pooledResult(codebook: TaskCodebook, measurements: ImageMeasurement[]): EvaluateResult {
  const result = poolImageMeasurements(toCodebook(codebook), measurements);
  return {
    images: result.images.map((r) => ({ width: r.width, height: r.height, ...measuredFigures(r) })),
    overall: measuredFigures(result.overall),
  };
}

/** The reference sweep: every codec this sharp build writes (JPEG, WebP, AVIF when available) at the standard qualities. */
export async function baselinePoints(
  images: TaskImage[],
  color: ColorMode,
  memory: MemoryBudget,
  codecs?: BaselineCodec[],
  qualities?: number[],
): Promise<BaselineResultPoint[]> {
  const decoded = await loadAll(images, color, memory);
  const points = await baselines(decoded, { codecs: codecs ?? (await availableBaselineCodecs()), qualities: qualities ?? [...DEFAULT_QUALITIES] });
  return points.map((p) => ({ codec: p.codec, quality: p.quality, bpp: p.bpp, mse: p.mse, psnr: psnrForJson(p.psnr), ssim: p.ssim }));
}

const bytesOf = (png: Buffer) => new Uint8Array(png.buffer, png.byteOffset, png.byteLength);

/**
 * One image through the codec, with the same encode and decoder the evaluation used, so the figures and pixels here
 * are the ones it measured. Views: the source as the codebook sees it (luma rounded to 8 bits), the decoder output,
 * and the engine's error map (largest absolute channel error × ERROR_MAP_GAIN, black = exact).
 */
export async function reconstructImage(codebook: TaskCodebook, image: TaskImage, memory: MemoryBudget): Promise<ReconstructResult> {
  const book = toCodebook(codebook);
  const source = await loadCharged(image, codebook.patch.color, memory);
  const { container, reconstruction } = await encode(book, source, ON_THIS_THREAD);
  const mse = meanSquaredError(source.pixels, reconstruction);
  const { width, height, channels } = source;
  return {
    views: {
      original: bytesOf(await encodePng(toUint8(source.pixels), width, height, channels)),
      reconstruction: bytesOf(await encodePng(reconstruction, width, height, channels)),
      error: bytesOf(await encodeErrorMapPng(source.pixels, reconstruction, width, height, channels)),
    },
    width: source.width,
    height: source.height,
    encodedBytes: container.length,
    bpp: (container.length * 8) / (source.width * source.height),
    mse,
    psnr: psnrForJson(psnrFromMse(mse)),
    ssim: ssimOfImages(source.pixels, reconstruction, source.width, source.height, source.channels),
  };
}

/** One image coded as the evaluation codes it (same encoder, so the same indices), as .npy files. */
export async function indexMapOf(codebook: TaskCodebook, image: TaskImage, memory: MemoryBudget): Promise<IndexMapResult> {
  const book = toCodebook(codebook);
  const source = await loadCharged(image, codebook.patch.color, memory);
  const encoded = await encodeImage(book, source, ON_THIS_THREAD);
  const means = meanCodesNpy(encoded);
  return { indices: bytesOf(indexMapNpy(encoded, book.size)), means: means && bytesOf(means), blocksX: encoded.blocksX, blocksY: encoded.blocksY };
}

/** One image through a tree's levels or a residual codebook's stages (engine metrics/structure-steps.ts). */
export async function structureStepsOf(codebook: TaskCodebook, image: TaskImage, memory: MemoryBudget, keep?: number): Promise<StructureStepsResult> {
  const book = toCodebook(codebook);
  const source = await loadCharged(image, codebook.patch.color, memory);
  const { kind, steps, pixels } = await structureSteps(book, source, { ...ON_THIS_THREAD, keep });
  return {
    kind,
    steps: steps.map((s) => ({ step: s.step, indexBits: s.indexBits, mse: s.mse, psnr: psnrForJson(s.psnr) })),
    png: pixels && bytesOf(await encodePng(pixels, source.width, source.height, source.channels)),
  };
}

export default async function run(
  task: EvaluateTask, context?: TaskContext,
): Promise<ImageMeasurement[] | BaselineResultPoint[] | ReconstructResult | IndexMapResult | StructureStepsResult> {
  const memory = taskMemory(context);
  switch (task.op) {
    case 'measure':
      return measureImages(task.codebook, task.images, memory);
    case 'baselines':
      return baselinePoints(task.images, task.color, memory, task.codecs, task.qualities);
    case 'reconstruct':
      return reconstructImage(task.codebook, task.image, memory);
    case 'index-map':
      return indexMapOf(task.codebook, task.image, memory);
    case 'structure-steps':
      return structureStepsOf(task.codebook, task.image, memory, task.keep);
  }
}
