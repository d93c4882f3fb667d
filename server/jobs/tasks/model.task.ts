/**
 * Worker entry point for the codebook read as a model of its training patches (server/engine/model): per-block anomaly
 * scores of held-out images with thresholds measured on the training patches, and denoising with synthetic noise.
 * Plain data in and out; it never touches the database, HTTP or services.
 */
import {
  addNoise, anomalyModel, anomalyScores, codebookMixture, decodedImageBytes, denoise, encodePng, meanSquaredError, psnrForJson, psnrFromMse, rankBlocks,
  toUint8, type AnomalyModel, type AnomalyScore, type Codebook, type MemoryBudget,
} from '../../engine';
import { loadCharged, toCodebook, type TaskCodebook, type TaskImage } from './evaluate.task';
import { taskMemory, type TaskContext } from './task-context';
import trainingVectors from './training-vectors.task';

export type ModelTask =
  | {
      op: 'anomaly';
      codebook: TaskCodebook;
      /** Summed squared error per cell on the training vectors, as training stored it; null when not stored. */
      cellDistortion: number[] | null;
      /** The run's training images (the codebook's training patches are drawn again from them); empty for an imported codebook. */
      training: TaskImage[];
      images: TaskImage[];
      rate: number;
      score: AnomalyScore;
      limit: number;
    }
  | { op: 'denoise'; codebook: TaskCodebook; cellDistortion: number[] | null; image: TaskImage; sigma: number; seed: number; step: number };

export interface AnomalyTaskResult {
  calibrated: boolean;
  varianceSource: string;
  trainingBlocks: number;
  thresholds: { nll: number; distance: number } | null;
  flaggedTrainingBlocks: { nll: number; distance: number } | null;
  images: { width: number; height: number; blockWidth: number; blockHeight: number; blocksX: number; blocksY: number; nll: number[]; distance: number[]; flagged: number[] }[];
  top: { image: number; x: number; y: number; nll: number; distance: number; flagged: boolean }[];
}

export interface DenoiseTaskResult {
  width: number;
  height: number;
  sigma: number;
  varianceSource: string;
  psnr: { noisy: number | null; hard: number | null; mean: number | null };
  /** PNGs: the image as the codebook sees it, with the noise, and denoised by each estimator. */
  views: { clean: Uint8Array; noisy: Uint8Array; hard: Uint8Array; mean: Uint8Array };
}

/**
 * The model of an anomaly request: calibrated on the training patches when there are training images (drawn as the
 * training job drew them: the run's sample and seed), else scores only, with no threshold (an imported codebook
 * brings no training images, and a threshold not measured on them would mean nothing).
 */
async function modelOf(book: Codebook, task: Extract<ModelTask, { op: 'anomaly' }>, context?: TaskContext): Promise<AnomalyModel & { calibrated: boolean }> {
  if (task.training.length > 0) {
    const patch = book.patch!;
    const vectors = await trainingVectors(
      {
        files: task.training,
        color: patch.color,
        patch: { width: patch.width, height: patch.height },
        sample: book.training.sample ?? Number.MAX_SAFE_INTEGER,
        seed: book.training.seed ?? 1,
        meanBits: book.preprocessing.kind === 'mean-removed' ? book.preprocessing.meanBits : 0,
      },
      context,
    );
    return { ...anomalyModel(book, vectors, { rate: task.rate, score: task.score }), calibrated: true };
  }
  const mixture = codebookMixture(book, task.cellDistortion ? { cellDistortion: task.cellDistortion } : {});
  const never = { nll: Infinity, distance: Infinity };
  return {
    mixture,
    calibrated: false,
    calibration: { rate: task.rate, score: task.score, trainingVectors: 0, thresholds: never, flaggedTraining: { nll: 0, distance: 0 }, medians: { nll: 0, distance: 0 } },
  };
}

async function anomalies(task: Extract<ModelTask, { op: 'anomaly' }>, memory: MemoryBudget, context?: TaskContext): Promise<AnomalyTaskResult> {
  const book = toCodebook(task.codebook);
  const model = await modelOf(book, task, context);
  const results = [];
  for (const image of task.images) {
    const bytes = decodedImageBytes(image.width, image.height, book.patch!.color);
    const decoded = await loadCharged(image, book.patch!.color, memory);
    try {
      results.push(anomalyScores(book, model, decoded));
    } finally {
      memory.release(bytes);
    }
  }
  const c = model.calibration;
  return {
    calibrated: model.calibrated,
    varianceSource: model.mixture.varianceSource,
    trainingBlocks: c.trainingVectors,
    thresholds: model.calibrated ? c.thresholds : null,
    flaggedTrainingBlocks: model.calibrated ? c.flaggedTraining : null,
    images: results.map((r) => ({
      width: r.width,
      height: r.height,
      blockWidth: r.blockWidth,
      blockHeight: r.blockHeight,
      blocksX: r.blocksX,
      blocksY: r.blocksY,
      nll: r.blocks.map((b) => b.nll),
      distance: r.blocks.map((b) => b.distance),
      flagged: r.blocks.flatMap((b, i) => (b.flagged ? [i] : [])),
    })),
    top: rankBlocks(results, c.score, task.limit).map((b) => ({ image: b.image, x: b.x, y: b.y, nll: b.nll, distance: b.distance, flagged: b.flagged })),
  };
}

const bytesOf = (png: Buffer) => new Uint8Array(png.buffer, png.byteOffset, png.byteLength);

/** Noise added with the seed, then both estimators at σ; PSNR of each against the image as the codebook sees it. */
async function denoised(task: Extract<ModelTask, { op: 'denoise' }>, memory: MemoryBudget): Promise<DenoiseTaskResult> {
  const book = toCodebook(task.codebook);
  const clean = await loadCharged(task.image, book.patch!.color, memory);
  const noisy = addNoise(clean, task.sigma, task.seed);
  const mixture = codebookMixture(book, task.cellDistortion ? { cellDistortion: task.cellDistortion } : {});
  const hard = denoise(book, mixture, noisy, { sigma: task.sigma, estimator: 'hard', step: task.step }).pixels;
  const mean = denoise(book, mixture, noisy, { sigma: task.sigma, estimator: 'mean', step: task.step }).pixels;
  const { width, height, channels } = clean;
  const psnr = (pixels: ArrayLike<number>) => psnrForJson(psnrFromMse(meanSquaredError(clean.pixels, pixels)));
  const png = async (pixels: Uint8Array) => bytesOf(await encodePng(pixels, width, height, channels));
  return {
    width,
    height,
    sigma: task.sigma,
    varianceSource: mixture.varianceSource,
    psnr: { noisy: psnr(noisy.pixels), hard: psnr(hard), mean: psnr(mean) },
    views: { clean: await png(toUint8(clean.pixels)), noisy: await png(toUint8(noisy.pixels)), hard: await png(hard), mean: await png(mean) },
  };
}

export default async function run(task: ModelTask, context?: TaskContext): Promise<AnomalyTaskResult | DenoiseTaskResult> {
  const memory = taskMemory(context);
  return task.op === 'anomaly' ? anomalies(task, memory, context) : denoised(task, memory);
}
