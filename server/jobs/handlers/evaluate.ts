import type { Repositories } from '../../db';
import type { CodebookWithCodewords } from '../../db/repositories/codebooks';
import type { EvaluationImageMetrics } from '../../db/repositories/evaluations';
import type { RunImageRecord } from '../../db/repositories/runs';
import { heldOutHash } from '../../services/held-out-hash';
import { toTaskCodebook } from '../../services/task-codebook';
import type { ImageRef, ServedBy } from '../compute/tasks';
import type { BaselineResultPoint, EvaluateResult } from '../tasks/evaluate.task';
import type { JobContext, JobHandler } from '../types';

/**
 * A baseline sweep costs about as much as this many codebook evaluations on the same images (three codecs at eleven
 * qualities, each encoded, decoded and measured); used only to spread the progress fraction.
 */
const BASELINE_WEIGHT = 4;

/**
 * Measures codebooks on one held-out list and fills the reference codec cache for it when empty. Everything measured
 * is written in the transaction that marks the job succeeded, so a cancelled or crashed job leaves the earlier
 * results as they were.
 */
/** Each worker once, in the order they first served the job. */
function distinctWorkers(list: ServedBy[]): ServedBy[] {
  const seen = new Map<string, ServedBy>();
  for (const w of list) if (!seen.has(w.workerId)) seen.set(w.workerId, w);
  return [...seen.values()];
}

async function measure(
  { id: jobId, teamId }: { id: number; teamId: number },
  codebooks: CodebookWithCodewords[],
  images: RunImageRecord[],
  heldOutHash: string,
  color: 'luma' | 'rgb',
  ctx: JobContext<'evaluate'>,
): Promise<void> {
  const { db, compute } = ctx.deps;
  if (images.length === 0) throw new Error('There are no held-out images to evaluate on');
  const refs: ImageRef[] = images.map((i) => ({ sha256: i.sha256, name: i.fileName, width: i.width, height: i.height }));
  const servedBy: ServedBy[] = [];
  const task = { signal: ctx.signal, progress: () => undefined };
  const needBaselines = (await db.repos.baselines.count(heldOutHash, color)) === 0;
  const total = codebooks.length + (needBaselines ? BASELINE_WEIGHT : 0);
  const targetSize = codebooks.reduce((m, c) => Math.max(m, c.size), 0);
  const results: { codebook: CodebookWithCodewords; result: EvaluateResult }[] = [];
  for (const [n, codebook] of codebooks.entries()) {
    ctx.signal.throwIfAborted();
    ctx.progress({ phase: 'evaluating', size: codebook.size, targetSize, fraction: n / total, message: `codebook of ${codebook.size} on ${images.length} images` });
    const done = await compute.run({ kind: 'evaluate', jobId, teamId, codebook: toTaskCodebook(codebook), images: refs }, task);
    servedBy.push(done.servedBy);
    results.push({ codebook, result: done.result });
  }
  let points: BaselineResultPoint[] = [];
  if (needBaselines) {
    ctx.signal.throwIfAborted();
    ctx.progress({ phase: 'baselines', fraction: codebooks.length / total, message: 'reference codecs on the held-out images' });
    const done = await compute.run({ kind: 'baselines', jobId, teamId, images: refs, color }, task);
    servedBy.push(done.servedBy);
    points = done.result;
  }
  ctx.signal.throwIfAborted();
  ctx.progress({ phase: 'saving', fraction: 1 });
  await ctx.complete(async (tx: Repositories) => {
    await tx.jobs.recordServedBy(jobId, distinctWorkers(servedBy));
    for (const { codebook, result } of results) {
      const rows: EvaluationImageMetrics[] = result.images.map((m, i) => ({
        imageId: images[i].id,
        mse: m.mse,
        psnr: m.psnr,
        ssim: m.ssim,
        bppFixed: m.bppFixed,
        bppEntropy: m.bppEntropy,
        bppActual: m.bppActual,
        containerBytes: m.bytes,
      }));
      await tx.evaluations.replace(codebook.id, heldOutHash, { ...result.overall }, rows);
    }
    await tx.baselines.insertMissing(heldOutHash, color, points);
  });
}

/**
 * Measures every codebook of the job's run on the run's held-out images (or one codebook on the list in the job's
 * payload), fills the reference codec cache for that list, and commits the results with the job's success.
 */
export const evaluateHandler: JobHandler<'evaluate'> = async (job, ctx) => {
  const { db } = ctx.deps;
  const { input } = ctx;
  if (input.runId !== null) {
    const run = await db.repos.runs.findById(input.runId);
    if (!run) throw new Error(`run ${input.runId} no longer exists`);
    const codebooks = await db.repos.codebooks.listForRunWithCodewords(run.id);
    if (codebooks.length === 0) throw new Error('the run has no codebooks to evaluate');
    const images = await db.repos.runs.imagesOf(run.id, 'held-out');
    await measure(job, codebooks, images, run.heldOutHash, run.normalized.color, ctx);
    return;
  }
  const codebook = await db.repos.codebooks.findById(input.codebookId);
  if (!codebook) throw new Error(`codebook ${input.codebookId} no longer exists`);
  const ids = input.payload.heldOutImageIds;
  const images = await db.repos.runs.teamImages(job.teamId, ids);
  if (images.length !== ids.length) throw new Error('some of the images to evaluate on were deleted');
  // The key is taken from the images as they are now, as the run's is, not trusted from the payload.
  await measure(job, [codebook], images, heldOutHash(images.map((i) => i.sha256)), codebook.color, ctx);
};
