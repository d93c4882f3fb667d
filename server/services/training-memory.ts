import type { NormalizedRunConfig } from '../contracts';
import { formatBytes, patchPositions, trainingMemory, type TrainingMemory } from '../engine';

/** The training memory cap (TRAINING_MAX_BYTES) and the engine threads the estimate counts codebook copies for. */
export interface TrainingLimits {
  maxBytes: number;
  engineThreads: number;
}

export interface RunTrainingMemory extends TrainingMemory {
  /** Training vectors after the cap: the images' patches, at most maxVectors. */
  vectors: number;
  dimension: number;
  /** The largest training image: decoding takes one image at a time, so the largest sets the decoding peak. */
  largestImage: { width: number; height: number } | null;
}

type RunShape = Pick<NormalizedRunConfig, 'patch' | 'stride' | 'color' | 'maxVectors' | 'sizes'>;

/** What training this run will hold at its peak (engine/memory/training-memory.ts), from its settings and image sizes. */
export function runTrainingMemory(cfg: RunShape, training: { width: number; height: number }[], limits: Pick<TrainingLimits, 'engineThreads'>): RunTrainingMemory {
  const available = training.reduce((n, img) => n + patchPositions(img.width, img.height, cfg.patch, cfg.stride), 0);
  const vectors = Math.min(available, cfg.maxVectors);
  const dimension = cfg.patch.width * cfg.patch.height * (cfg.color === 'rgb' ? 3 : 1);
  let largestImage: { width: number; height: number } | null = null;
  for (const img of training) if (!largestImage || img.width * img.height > largestImage.width * largestImage.height) largestImage = { width: img.width, height: img.height };
  const memory = trainingMemory({
    vectors,
    dimension,
    codebookSize: Math.max(1, ...cfg.sizes),
    threads: limits.engineThreads,
    largestImage,
    color: cfg.color,
  });
  return { ...memory, vectors, dimension, largestImage };
}

/** The refusal of a run whose training would pass the cap: a message and the figures behind it. */
export interface TrainingMemoryExcess {
  message: string;
  neededBytes: number;
  capBytes: number;
  vectors: number;
  dimension: number;
  vectorBytes: number;
  workingBytes: number;
  imageBytes: number;
}

/** Null when the run fits under the cap; else what it needs, said so a person can act on it. */
export function trainingMemoryExcess(memory: RunTrainingMemory, maxBytes: number): TrainingMemoryExcess | null {
  if (memory.totalBytes <= maxBytes) return null;
  const workingBytes = memory.searchBytes + memory.boundBytes + memory.codebookBytes;
  const image = memory.largestImage ? `, plus ${formatBytes(memory.imageBytes)} for decoding its largest image (${memory.largestImage.width}×${memory.largestImage.height})` : '';
  return {
    message:
      `training would hold ${formatBytes(memory.totalBytes)} (${memory.totalBytes} bytes), more than this studio's cap of ` +
      `${formatBytes(maxBytes)} (TRAINING_MAX_BYTES): ${memory.vectors} vectors × ${memory.dimension} components × 4 bytes = ` +
      `${formatBytes(memory.vectorBytes)}, ${formatBytes(workingBytes)} of working state${image}. ` +
      'Lower the vector cap, or use smaller patches or luma',
    neededBytes: memory.totalBytes,
    capBytes: maxBytes,
    vectors: memory.vectors,
    dimension: memory.dimension,
    vectorBytes: memory.vectorBytes,
    workingBytes,
    imageBytes: memory.imageBytes,
  };
}
