/**
 * Worker entry point for the codebook read as a model of its training patches (server/engine/model): per-block anomaly
 * scores of held-out images with thresholds measured on the training patches, and denoising with synthetic noise.
 * Plain data in and out; it never touches the database, HTTP or services.
 */
import {
  addNoise, anomalyModelFromScores, anomalyScores, codebookMixture, decodedImageBytes, denoise, encodePng, meanSquaredError, psnrForJson, psnrFromMse,
  rankBlocks, restoreMixture, scoreVectors, toUint8, type AnomalyModel, type AnomalyScore, type Codebook, type MemoryBudget, type VarianceSource,
} from '../../engine';
import { loadCharged, toCodebook, type TaskCodebook, type TaskImage } from './evaluate.task';
import { taskMemory, type TaskContext } from './task-context';
import trainingVectors from './training-vectors.task';

/**
 * A codebook's calibration: the mixture's variances measured on its training patches and those patches' own scores,
 * kept by the service so that every rate and image is answered without scoring the training patches again.
 */
export interface TaskCalibration {
  variances: Float64Array; // K
  varianceSource: VarianceSource;
  pooledVariance: number;
  nll: Float64Array; // N: the training patches' scores
  distance: Float64Array; // N
}

export type ModelTask =
  | {
      op: 'calibrate';
      codebook: TaskCodebook;
      /** The run's training images: the codebook's training patches are drawn again from them as the training job drew them. */
      training: TaskImage[];
    }
  | {
      op: 'anomaly';
      codebook: TaskCodebook;
      /** Summed squared error per cell on the training vectors, as training stored it; null when not stored. */
      cellDistortion: number[] | null;
      /** From a calibrate task; null for a codebook without training images here (imported). */
      calibration: TaskCalibration | null;
      images: TaskImage[];
      rate: number;
      score: AnomalyScore;
      limit: number;
    }
  | { op: 'denoise'; codebook: TaskCodebook; cellDistortion: number[] | null; image: TaskImage; sigma: number; seed: number; step: number };

export interface AnomalyTaskResult {
  calibrated: boolean;
  varianceSource: VarianceSource;
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
  varianceSource: VarianceSource;
  psnr: { noisy: number | null; hard: number | null; mean: number | null };
  /** PNGs: the image as the codebook sees it, with the noise, and denoised by each estimator. */
  views: { clean: Uint8Array; noisy: Uint8Array; hard: Uint8Array; mean: Uint8Array };
}

/** Draws the training patches again (the run's vector cap and seed, the codebook's mean removal) and scores them. */
async function calibrate(task: Extract<ModelTask, { op: 'calibrate' }>, context?: TaskContext): Promise<TaskCalibration> {
  const book = toCodebook(task.codebook);
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
  const mixture = codebookMixture(book, { trainingVectors: vectors });
  const scores = scoreVectors(mixture, vectors);
  return { variances: mixture.variances, varianceSource: mixture.varianceSource, pooledVariance: mixture.pooledVariance, nll: scores.nll, distance: scores.distance };
}

/**
 * The model of an anomaly request: from the kept calibration when there is one, else scores only, with no threshold
 * (an imported codebook brings no training images, and a threshold not measured on them would mean nothing).
 */
function modelOf(book: Codebook, task: Extract<ModelTask, { op: 'anomaly' }>): AnomalyModel & { calibrated: boolean } {
  const c = task.calibration;
  if (c) return { ...anomalyModelFromScores(restoreMixture(book, c), c, { rate: task.rate, score: task.score }), calibrated: true };
  const mixture = codebookMixture(book, task.cellDistortion ? { cellDistortion: task.cellDistortion } : {});
  const never = { nll: Infinity, distance: Infinity };
  return {
    mixture,
    calibrated: false,
    calibration: { rate: task.rate, score: task.score, trainingVectors: 0, thresholds: never, flaggedTraining: { nll: 0, distance: 0 }, medians: { nll: 0, distance: 0 } },
  };
}

async function anomalies(task: Extract<ModelTask, { op: 'anomaly' }>, memory: MemoryBudget): Promise<AnomalyTaskResult> {
  const book = toCodebook(task.codebook);
  const model = modelOf(book, task);
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

export default async function run(task: ModelTask, context?: TaskContext): Promise<TaskCalibration | AnomalyTaskResult | DenoiseTaskResult> {
  const memory = taskMemory(context);
  switch (task.op) {
    case 'calibrate':
      return calibrate(task, context);
    case 'anomaly':
      return anomalies(task, memory);
    case 'denoise':
      return denoised(task, memory);
  }
}
