import type { Codebook } from '../format/codebook-schema';
import { checkImageMatchesCodebook } from '../format/codec';
import type { PixelImage } from '../io/image';
import { lumaBt601 } from '../io/luma';
import { removeMeans } from '../io/mean-removal';
import { tile } from '../io/patches';
import { codebookMixture, scoreVectors, type PatchMixture } from './mixture';
import { countAbove, empiricalQuantile, falseAlarmThreshold } from './threshold';

/** Which score flags a block: the mixture's negative log-likelihood, or the squared distance to the nearest codeword. */
export type AnomalyScore = 'nll' | 'distance';

export interface AnomalyCalibration {
  rate: number; // the false-alarm rate asked for
  score: AnomalyScore; // the score that flags
  trainingVectors: number;
  /** Per score: the (1 − rate) quantile of the training vectors' scores, and how many training vectors lie above it. */
  thresholds: Record<AnomalyScore, number>;
  flaggedTraining: Record<AnomalyScore, number>;
  /** Per score: the training vectors' median, where the heat map's colour scale starts. */
  medians: Record<AnomalyScore, number>;
}

export interface AnomalyModel {
  mixture: PatchMixture;
  calibration: AnomalyCalibration;
}

/**
 * Builds the mixture on the training vectors (N × d, the codebook's vector domain: mean-removed as the encoder does when
 * the codebook is) and sets thresholds from the same vectors' scores at the false-alarm `rate`.
 */
export function calibrateAnomaly(codebook: Codebook, trainingVectors: Float32Array, rate: number, score: AnomalyScore = 'nll', signal?: AbortSignal): AnomalyModel {
  const mixture = codebookMixture(codebook, trainingVectors);
  return modelFromScores(mixture, scoreVectors(mixture, trainingVectors, signal), rate, score);
}

/**
 * A model from a mixture and its training vectors' scores (as scoreVectors gave them, kept): thresholds at `rate`
 * from those scores. calibrateAnomaly is this on freshly computed scores, so a kept calibration answers any rate alike.
 */
export function modelFromScores(mixture: PatchMixture, scores: { nll: ArrayLike<number>; distance: ArrayLike<number> }, rate: number, score: AnomalyScore): AnomalyModel {
  const thresholds = { nll: falseAlarmThreshold(scores.nll, rate), distance: falseAlarmThreshold(scores.distance, rate) };
  return {
    mixture,
    calibration: {
      rate,
      score,
      trainingVectors: scores.nll.length,
      thresholds,
      flaggedTraining: { nll: countAbove(scores.nll, thresholds.nll), distance: countAbove(scores.distance, thresholds.distance) },
      medians: { nll: empiricalQuantile(scores.nll, 0.5), distance: empiricalQuantile(scores.distance, 0.5) },
    },
  };
}

/** The image's coding blocks as the encoder sees them: tiled (edges replicated) and, when mean-removed, minus the quantized mean. */
export function blockVectors(codebook: Codebook, image: PixelImage): { vectors: Float32Array; blocksX: number; blocksY: number } {
  const patch = checkImageMatchesCodebook(codebook, image);
  const tiled = tile(image, patch);
  if (codebook.preprocessing.kind === 'mean-removed') removeMeans(tiled.vectors, tiled.dimension, codebook.preprocessing.meanBits);
  return tiled;
}

export interface BlockScore {
  x: number; // pixel column of the block's top-left corner
  y: number; // pixel row of the block's top-left corner
  nearest: number;
  distance: number; // squared distance to the nearest codeword, summed over the block's components
  nll: number; // nats per block
  flagged: boolean;
}

export interface ImageAnomalies {
  name: string;
  width: number;
  height: number;
  blockWidth: number;
  blockHeight: number;
  blocksX: number;
  blocksY: number;
  blocks: BlockScore[]; // raster order of blocks
}

/** Scores every coding block of an image; a block is flagged when its calibrated score is strictly above the threshold. */
export function scoreImage(codebook: Codebook, model: AnomalyModel, image: PixelImage, signal?: AbortSignal): ImageAnomalies {
  const patch = checkImageMatchesCodebook(codebook, image);
  const { vectors, blocksX, blocksY } = blockVectors(codebook, image);
  const scores = scoreVectors(model.mixture, vectors, signal);
  const { score, thresholds } = model.calibration;
  const blocks: BlockScore[] = [];
  for (let b = 0; b < scores.nll.length; b += 1) {
    const values = { distance: scores.distance[b], nll: scores.nll[b] };
    blocks.push({
      x: (b % blocksX) * patch.width,
      y: Math.floor(b / blocksX) * patch.height,
      nearest: scores.nearest[b],
      ...values,
      flagged: values[score] > thresholds[score],
    });
  }
  return { name: image.name, width: image.width, height: image.height, blockWidth: patch.width, blockHeight: patch.height, blocksX, blocksY, blocks };
}

export interface RankedBlock extends BlockScore {
  image: number; // index into the images given
  name: string;
}

/** The `limit` most unusual blocks over a set, by the calibrated score, highest first (ties: earlier image, then raster order). */
export function rankBlocks(results: readonly ImageAnomalies[], score: AnomalyScore, limit: number): RankedBlock[] {
  const all: RankedBlock[] = [];
  results.forEach((r, image) => r.blocks.forEach((b) => all.push({ ...b, image, name: r.name })));
  // Array.prototype.sort is stable (ECMAScript 2019), so equal scores keep image and raster order.
  all.sort((a, b) => b[score] - a[score]);
  return all.slice(0, limit);
}

/**
 * The heat map of an image as 8-bit RGB (height × width × 3): the image in grey, each block tinted along a black–red–
 * yellow–white ramp by v = (score − training median) / (threshold − training median), clamped to [0, 1], at opacity
 * 0.7·v; flagged blocks get a one-pixel cyan outline (a colour the ramp never takes). So colour starts at a typical training block and saturates at
 * the threshold.
 */
const OUTLINE = [0, 255, 255];

export function anomalyMapPixels(image: PixelImage, result: ImageAnomalies, calibration: AnomalyCalibration): Uint8Array {
  const { width, height, channels, pixels } = image;
  const out = new Uint8Array(width * height * 3);
  for (let p = 0; p < width * height; p += 1) {
    const grey = channels === 3 ? lumaBt601(pixels[3 * p], pixels[3 * p + 1], pixels[3 * p + 2]) : pixels[p];
    out[3 * p] = out[3 * p + 1] = out[3 * p + 2] = Math.round(grey);
  }
  const { score, thresholds, medians } = calibration;
  const span = thresholds[score] - medians[score];
  const clamp01 = (t: number) => (t <= 0 ? 0 : t >= 1 ? 1 : t);
  for (const block of result.blocks) {
    const v = clamp01(span > 0 ? (block[score] - medians[score]) / span : block.flagged ? 1 : 0);
    const colour = [clamp01(3 * v), clamp01(3 * v - 1), clamp01(3 * v - 2)].map((c) => 255 * c);
    const alpha = 0.7 * v;
    const x1 = Math.min(block.x + result.blockWidth, width);
    const y1 = Math.min(block.y + result.blockHeight, height);
    for (let y = block.y; y < y1; y += 1) {
      for (let x = block.x; x < x1; x += 1) {
        const o = 3 * (y * width + x);
        const edge = block.flagged && (x === block.x || y === block.y || x === x1 - 1 || y === y1 - 1);
        for (let c = 0; c < 3; c += 1) out[o + c] = edge ? OUTLINE[c] : Math.round((1 - alpha) * out[o + c] + alpha * colour[c]);
      }
    }
  }
  return out;
}
