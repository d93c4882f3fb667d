import { MODEL_CAUTION, type ModelResult } from '../../contracts';
import type { RunImageRecord } from '../../db/repositories/runs';
import { toTaskCodebook } from '../../services/task-codebook';
import type { ImageRef } from '../compute/tasks';
import type { JobContext, JobHandler } from '../types';

/**
 * The codebook read as a model of its training patches (server/engine/model), as jobs: an anomaly map or ranked list,
 * and denoising with seeded noise. The work is one compute task on whichever worker takes it (pure float64 over the
 * codebook and the pixels, so the result is the same bits on any worker and thread count); the result is written
 * with the job's success, keyed by the job's id.
 */

const ref = (i: RunImageRecord): ImageRef => ({ sha256: i.sha256, name: i.fileName, width: i.width, height: i.height });

/** Where a denoise job's view is served. */
export const modelViewPath = (teamId: number, jobId: number, view: string) => `/api/teams/${teamId}/model-jobs/${jobId}/views/${view}`;

async function codebookOf(ctx: JobContext<'anomaly' | 'denoise'>) {
  const codebook = await ctx.deps.db.repos.codebooks.findById(ctx.input.codebookId);
  if (!codebook) throw new Error(`codebook ${ctx.input.codebookId} no longer exists`);
  return codebook;
}

async function imagesOf(ctx: JobContext<'anomaly' | 'denoise'>, teamId: number, ids: number[]): Promise<RunImageRecord[]> {
  const images = await ctx.deps.db.repos.runs.teamImages(teamId, ids);
  if (images.length !== ids.length) throw new Error('some of the images to score were deleted');
  const byId = new Map(images.map((i) => [i.id, i]));
  return ids.map((id) => byId.get(id)!);
}

/** Scores the payload's images (thresholds from the codebook's run's training images) and keeps a map or a ranked list. */
export const anomalyHandler: JobHandler<'anomaly'> = async (job, ctx) => {
  const { payload, codebookId } = ctx.input;
  const codebook = await codebookOf(ctx);
  const images = await imagesOf(ctx, job.teamId, payload.imageIds);
  const training = codebook.runId === null ? [] : await ctx.deps.db.repos.runs.imagesOf(codebook.runId, 'training');
  const { result: r, servedBy } = await ctx.deps.compute.run(
    {
      kind: 'model', op: 'anomaly', jobId: job.id, teamId: job.teamId, images: [...training, ...images].map(ref), codebook: toTaskCodebook(codebook),
      cellDistortion: codebook.cellDistortion, training: training.length, rate: payload.rate, score: payload.score, limit: payload.target === 'map' ? 0 : payload.limit,
    },
    { signal: ctx.signal, progress: (p) => ctx.progress(p) },
  );
  const info = {
    codebookId, rate: payload.rate, score: payload.score, calibrated: r.calibrated, varianceSource: r.varianceSource,
    trainingBlocks: r.trainingBlocks, thresholds: r.thresholds, flaggedTrainingBlocks: r.flaggedTrainingBlocks, caution: MODEL_CAUTION,
  };
  const result: ModelResult = payload.target === 'map'
    ? { type: 'anomaly-map', ...info, imageId: images[0].id, ...r.images[0] }
    : {
        type: 'anomaly-list', ...info, images: images.length,
        blocks: r.top.map((b) => ({
          imageId: images[b.image].id, fileName: images[b.image].fileName, x: b.x, y: b.y,
          width: Math.min(codebook.patch.width, r.images[b.image].width - b.x), height: Math.min(codebook.patch.height, r.images[b.image].height - b.y),
          nll: b.nll, distance: b.distance, flagged: b.flagged,
        })),
      };
  ctx.signal.throwIfAborted();
  ctx.progress({ phase: 'saving', fraction: 1 });
  await ctx.complete(async (tx) => {
    await tx.jobs.recordServedBy(job.id, [servedBy]);
    await tx.modelResults.insert(job.id, result);
  });
};

/** Adds the payload's seeded noise to one image and removes it with both estimators; keeps the figures and the four PNGs. */
export const denoiseHandler: JobHandler<'denoise'> = async (job, ctx) => {
  const { payload, codebookId } = ctx.input;
  const codebook = await codebookOf(ctx);
  const [image] = await imagesOf(ctx, job.teamId, [payload.imageId]);
  const { result: r, servedBy } = await ctx.deps.compute.run(
    {
      kind: 'model', op: 'denoise', jobId: job.id, teamId: job.teamId, images: [ref(image)], codebook: toTaskCodebook(codebook),
      cellDistortion: codebook.cellDistortion, sigma: payload.sigma, seed: payload.seed, step: payload.step,
    },
    { signal: ctx.signal, progress: (p) => ctx.progress(p) },
  );
  const view = (name: string) => modelViewPath(job.teamId, job.id, name);
  const result: ModelResult = {
    type: 'denoise', codebookId, imageId: image.id, width: r.width, height: r.height, sigma: payload.sigma, seed: payload.seed, step: payload.step,
    varianceSource: r.varianceSource, psnr: r.psnr,
    views: { clean: view('clean'), noisy: view('noisy'), hard: view('hard'), mean: view('mean') }, caution: MODEL_CAUTION,
  };
  ctx.signal.throwIfAborted();
  ctx.progress({ phase: 'saving', fraction: 1 });
  await ctx.complete(async (tx) => {
    await tx.jobs.recordServedBy(job.id, [servedBy]);
    await tx.modelResults.insert(job.id, result, r.views);
  });
};
