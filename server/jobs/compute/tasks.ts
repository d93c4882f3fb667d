import type { ColorMode, IterationStat, StructureInfo } from '../../engine';
import type { InitMethod, TreeGrowthKind } from '../../engine/vocabulary';
import type { ImageMeasurement } from '../../engine';
import type { BaselineResultPoint, TaskCodebook } from '../tasks/evaluate.task';
import type { AnomalyTaskResult, DenoiseTaskResult } from '../tasks/model.task';

/**
 * The compute tasks a job hands to a worker (the server's own or one that joined over the network). A task names
 * its images by content (SHA-256), never by path: a worker fetches the originals it is granted and caches them by
 * digest. Tasks and results travel as JSON through the job engine, typed arrays as base64 of their bytes, so a
 * worker's codewords reach the studio bit for bit.
 */
export interface ImageRef {
  sha256: string;
  /** For messages only. */
  name: string;
  width: number;
  height: number;
}

export interface TrainTask {
  kind: 'train';
  /** What the task is for, for the workers page and the logs. */
  jobId: number;
  teamId: number;
  images: ImageRef[];
  dimension: number;
  color: ColorMode;
  patch: { width: number; height: number };
  /** Step between training patches; absent: the patch side. */
  stride?: number;
  meanBits: number;
  init: InitMethod;
  epsilon: number;
  maxIterations: number;
  maxVectors: number;
  seed: number;
  /** Largest size of each training pass and the sizes of its output to keep (see trainingPasses). */
  passes: { k: number; keep: number[] }[];
  /** Entropy-constrained codebooks to train after the passes, one per λ, from the largest codebook kept. */
  lambdas?: number[];
  /**
   * Tree or residual codebooks instead of the passes (which are then empty), one per b: a tree balanced to depth b, or
   * `stages` residual stages sharing b bits (vocabulary parseStages), searched keeping `mBest` candidates (null: greedy).
   */
  structured?: { kind: 'tree'; bits: number[]; growth?: TreeGrowthKind } | { kind: 'residual'; bits: number[]; stages: number; mBest: number | null; refinementPasses: number };
}

export interface TrainedSize {
  size: number;
  codewords: Float32Array;
  usage: Uint32Array;
  cellDistortion: Float64Array;
  distortion: number;
  iterations: number;
  /** The LBG path that led to this size (every smaller size first, for split); an entropy-constrained codebook's own passes. */
  trace: IterationStat[];
  /** Absent: full search. Else the structure in its JSON form (plain lists: Huffman lengths, tree children, stage bits). */
  structure?: Exclude<StructureInfo, { kind: 'full' }>;
}

export interface TrainOutcome {
  vectorCount: number;
  codebooks: TrainedSize[];
}

/** Measures a codebook on some of a job's held-out images; the job pools every image's measurement in order. */
export interface MeasureComputeTask {
  kind: 'measure';
  jobId: number;
  teamId: number;
  codebook: TaskCodebook;
  images: ImageRef[];
}

export interface BaselinesComputeTask {
  kind: 'baselines';
  jobId: number;
  teamId: number;
  images: ImageRef[];
  color: ColorMode;
}

/**
 * The codebook read as a model of its training patches (server/engine/model): an anomaly job's scores, with the
 * calibration measured on the codebook's training images first, or a denoise job's images.
 */
export type ModelComputeTask = {
  kind: 'model';
  jobId: number;
  teamId: number;
  /** Every image the task reads (what its worker is granted): for anomaly the training images first, then those scored. */
  images: ImageRef[];
  codebook: TaskCodebook;
  /** Summed squared error per cell on the training vectors, as training stored it; null when not stored. */
  cellDistortion: number[] | null;
} & (
  | { op: 'anomaly'; /** How many of `images` are training images (0: no calibration). */ training: number; rate: number; score: 'nll' | 'distance'; limit: number }
  | { op: 'denoise'; sigma: number; seed: number; step: number }
);

export type ComputeTask = TrainTask | MeasureComputeTask | BaselinesComputeTask | ModelComputeTask;

export type ComputeResult<T extends ComputeTask> = T extends TrainTask
  ? TrainOutcome
  : T extends MeasureComputeTask
    ? ImageMeasurement[]
    : T extends BaselinesComputeTask
      ? BaselineResultPoint[]
      : T extends { op: 'anomaly' }
        ? AnomalyTaskResult
        : DenoiseTaskResult;

/** Who computed a task: shown on the run page and the workers page. */
export interface ServedBy {
  workerId: string;
  host: string;
}

// ---- the wire form: JSON with typed arrays as tagged base64 ----

type Wire = { $typed: 'u8' | 'f32' | 'f64' | 'u32'; b64: string };
/** JSON has no spelling for these; PSNR of an exact reconstruction is +∞ in the engine. */
type WireNumber = { $number: 'Infinity' | '-Infinity' | 'NaN' };

const TAGS = [
  ['u8', Uint8Array],
  ['f32', Float32Array],
  ['f64', Float64Array],
  ['u32', Uint32Array],
] as const;

/** JSON.stringify with typed arrays as their bytes in base64 (little-endian, as both ends are) and ±∞/NaN kept. */
export function toWire(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) => {
    if (typeof v === 'number' && !Number.isFinite(v)) return { $number: String(v) as WireNumber['$number'] } satisfies WireNumber;
    for (const [tag, Type] of TAGS) {
      if (v instanceof Type) return { $typed: tag, b64: Buffer.from(v.buffer, v.byteOffset, v.byteLength).toString('base64') } satisfies Wire;
    }
    return v;
  });
}

export function fromWire<T>(text: string): T {
  return JSON.parse(text, (_key, v: unknown) => {
    if (v && typeof v === 'object' && '$number' in v) return Number((v as WireNumber).$number);
    if (v && typeof v === 'object' && '$typed' in v && 'b64' in v) {
      const w = v as Wire;
      const bytes = Buffer.from(w.b64, 'base64');
      // Copied into a fresh, aligned buffer: the decoded Buffer may sit at any offset of a shared pool.
      const copy = new Uint8Array(bytes.length);
      copy.set(bytes);
      const Type = TAGS.find(([tag]) => tag === w.$typed)![1];
      return new Type(copy.buffer);
    }
    return v;
  }) as T;
}
