import { createHash } from 'node:crypto';
import {
  MODEL_CAUTION, type AnomalyList, type AnomalyListQuery, type AnomalyMap, type AnomalyQuery, type DenoiseQuery, type DenoiseResult,
} from '../contracts';
import type { Database } from '../db';
import type { CodebookWithCodewords } from '../db/repositories/codebooks';
import type { RunImageRecord } from '../db/repositories/runs';
import { badRequest, notFound } from '../errors';
import type { AnomalyTaskResult, DenoiseTaskResult, ModelTask, TaskCalibration } from '../jobs/tasks/model.task';
import { createComputeSlots } from './compute-slots';
import { toTaskCodebook } from './task-codebook';

/** Runs one model task off the request loop (a task pool); aborting the signal abandons it. */
export type ModelTaskRunner = (task: ModelTask, signal?: AbortSignal) => Promise<unknown>;

export interface CodebookModelDeps {
  db: Database;
  store: { path(sha256: string): string };
  runTask: ModelTaskRunner;
  /** Computations at once and waiting; the reconstruction views' bounds (RECONSTRUCTION_MAX_CONCURRENT, …_QUEUED). */
  maxConcurrent: number;
  maxQueued: number;
}

type VarianceSource = AnomalyMap['varianceSource'];

/**
 * Calibrations kept, most recently used first out last. Each holds two float64 scores per training patch: 3.2 MB at the
 * default vector cap (200 000), 32 MB at its largest (2 000 000), so four stay well inside a server's memory.
 */
const CALIBRATIONS_KEPT = 4;

/**
 * The codebook read as a density of its training patches (server/engine/model/README.md), on the studio's data:
 * per-block anomaly scores of images with thresholds measured on the codebook's run's training images (drawn again
 * with the run's vector cap and seed; the calibration is kept in memory for the last few codebooks), and denoising of
 * an image with seeded synthetic noise. Nothing is stored; each answer is computed on a pool thread, within the same
 * kind of bounds as the reconstruction views (429 beyond them).
 */
export function createCodebookModelService(deps: CodebookModelDeps) {
  const { db } = deps;
  const slots = createComputeSlots({ maxRunning: deps.maxConcurrent, maxQueued: deps.maxQueued, what: 'codebook model computations' });

  const taskImage = (i: RunImageRecord) => ({ path: deps.store.path(i.sha256), name: i.fileName, width: i.width, height: i.height });

  async function mustFind(teamId: number, codebookId: number): Promise<CodebookWithCodewords> {
    const codebook = await db.repos.codebooks.findForTeam(teamId, codebookId);
    if (!codebook) throw notFound('Codebook');
    return codebook;
  }

  async function mustFindImage(teamId: number, imageId: number): Promise<RunImageRecord> {
    const [image] = await db.repos.runs.teamImages(teamId, [imageId]);
    if (!image) throw notFound('Image');
    return image;
  }

  async function run<T>(task: ModelTask, signal: AbortSignal): Promise<T> {
    const release = await slots.acquire(signal);
    try {
      return (await deps.runTask(task, signal)) as T;
    } finally {
      release();
    }
  }

  const calibrations = new Map<string, Promise<TaskCalibration>>();
  const stats = { calibrations: 0 };

  /**
   * The codebook's calibration on its run's training images: computed once and kept (keyed by the codebook and the
   * training images' contents, so a changed training set is calibrated afresh), shared by concurrent requests. It
   * runs under its own signal, not a client's, since others may be waiting for it; a failure is not kept.
   */
  async function calibrationOf(codebook: CodebookWithCodewords): Promise<TaskCalibration | null> {
    const training = codebook.runId === null ? [] : await db.repos.runs.imagesOf(codebook.runId, 'training');
    if (training.length === 0) return null;
    const key = `${codebook.id}:${createHash('sha256').update(training.map((i) => i.sha256).join(',')).digest('hex')}`;
    let kept = calibrations.get(key);
    if (kept) {
      calibrations.delete(key);
    } else {
      stats.calibrations += 1;
      kept = run<TaskCalibration>({ op: 'calibrate', codebook: toTaskCodebook(codebook), training: training.map(taskImage) }, new AbortController().signal);
      kept.catch(() => {
        if (calibrations.get(key) === kept) calibrations.delete(key);
      });
    }
    calibrations.set(key, kept);
    for (const oldest of calibrations.keys()) {
      if (calibrations.size <= CALIBRATIONS_KEPT) break;
      calibrations.delete(oldest);
    }
    return kept;
  }

  async function anomalies(codebook: CodebookWithCodewords, images: RunImageRecord[], q: AnomalyQuery, limit: number, signal: AbortSignal): Promise<AnomalyTaskResult> {
    const calibration = await calibrationOf(codebook);
    return run<AnomalyTaskResult>(
      {
        op: 'anomaly',
        codebook: toTaskCodebook(codebook),
        cellDistortion: codebook.cellDistortion,
        calibration,
        images: images.map(taskImage),
        rate: q.rate,
        score: q.score,
        limit,
      },
      signal,
    );
  }

  const modelInfo = (codebookId: number, q: AnomalyQuery, r: AnomalyTaskResult) => ({
    codebookId,
    rate: q.rate,
    score: q.score,
    calibrated: r.calibrated,
    varianceSource: r.varianceSource as VarianceSource,
    trainingBlocks: r.trainingBlocks,
    thresholds: r.thresholds,
    flaggedTrainingBlocks: r.flaggedTrainingBlocks,
    caution: MODEL_CAUTION,
  });

  return {
    /** Every coding block's scores for one image of the team through one of its codebooks. */
    async anomalyMap(teamId: number, codebookId: number, imageId: number, q: AnomalyQuery, signal: AbortSignal): Promise<AnomalyMap> {
      const codebook = await mustFind(teamId, codebookId);
      const image = await mustFindImage(teamId, imageId);
      const r = await anomalies(codebook, [image], q, 0, signal);
      return { ...modelInfo(codebookId, q, r), imageId, ...r.images[0] };
    },

    /** The most unusual blocks over a set of the team (default: the codebook's run's held-out images), highest first. */
    async anomalyList(teamId: number, codebookId: number, q: AnomalyListQuery, signal: AbortSignal): Promise<AnomalyList> {
      const codebook = await mustFind(teamId, codebookId);
      let images: RunImageRecord[];
      if (q.setId !== undefined) {
        const set = await db.repos.runs.setImages(teamId, q.setId);
        if (!set) throw notFound('Image set');
        images = set;
      } else if (codebook.runId !== null) {
        images = await db.repos.runs.imagesOf(codebook.runId, 'held-out');
      } else {
        throw badRequest('An imported codebook has no held-out images of its own; name a set with setId');
      }
      const r = await anomalies(codebook, images, q, q.limit, signal);
      return {
        ...modelInfo(codebookId, q, r),
        images: images.length,
        blocks: r.top.map((b) => ({
          imageId: images[b.image].id,
          fileName: images[b.image].fileName,
          x: b.x,
          y: b.y,
          width: Math.min(codebook.patch.width, r.images[b.image].width - b.x),
          height: Math.min(codebook.patch.height, r.images[b.image].height - b.y),
          nll: b.nll,
          distance: b.distance,
          flagged: b.flagged,
        })),
      };
    },

    /** Calibrations computed since start (each scores a codebook's training patches once), for tests and operators. */
    stats(): { calibrations: number; kept: number } {
      return { ...stats, kept: calibrations.size };
    },

    /** Seeded Gaussian noise of `sigma` added to one image of the team, removed by the nearest codeword and by the posterior mean. */
    async denoise(teamId: number, codebookId: number, imageId: number, q: DenoiseQuery, signal: AbortSignal): Promise<DenoiseResult> {
      const codebook = await mustFind(teamId, codebookId);
      const image = await mustFindImage(teamId, imageId);
      const r = await run<DenoiseTaskResult>(
        { op: 'denoise', codebook: toTaskCodebook(codebook), cellDistortion: codebook.cellDistortion, image: taskImage(image), sigma: q.sigma, seed: q.seed, step: q.step },
        signal,
      );
      const url = (png: Uint8Array) => `data:image/png;base64,${Buffer.from(png.buffer, png.byteOffset, png.byteLength).toString('base64')}`;
      return {
        codebookId,
        imageId,
        width: r.width,
        height: r.height,
        sigma: q.sigma,
        seed: q.seed,
        step: q.step,
        varianceSource: r.varianceSource as VarianceSource,
        psnr: r.psnr,
        views: { clean: url(r.views.clean), noisy: url(r.views.noisy), hard: url(r.views.hard), mean: url(r.views.mean) },
        caution: MODEL_CAUTION,
      };
    },
  };
}

export type CodebookModelService = ReturnType<typeof createCodebookModelService>;
