import type { Repositories } from '../../db';
import type { CodebookWithCodewords } from '../../db/repositories/codebooks';
import type { EvaluationImageMetrics } from '../../db/repositories/evaluations';
import type { RunImageRecord } from '../../db/repositories/runs';
import { heldOutHash } from '../../services/held-out-hash';
import { toTaskCodebook } from '../../services/task-codebook';
import type { BaselineResultPoint, EvaluateResult, TaskImage } from '../tasks/evaluate.task';
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
async function measure(
  codebooks: CodebookWithCodewords[],
  images: RunImageRecord[],
  heldOutHash: string,
  color: 'luma' | 'rgb',
  ctx: JobContext<'evaluate'>,
): Promise<void> {
  const { db, store, runEvaluationTask } = ctx.deps;
  if (images.length === 0) throw new Error('There are no held-out images to evaluate on');
  const inputs: TaskImage[] = images.map((i) => ({ path: store.path(i.sha256), name: i.fileName, width: i.width, height: i.height }));
  const needBaselines = (await db.repos.baselines.count(heldOutHash, color)) === 0;
  const total = codebooks.length + (needBaselines ? BASELINE_WEIGHT : 0);
  const targetSize = codebooks.reduce((m, c) => Math.max(m, c.size), 0);
  const results: { codebook: CodebookWithCodewords; result: EvaluateResult }[] = [];
  for (const [n, codebook] of codebooks.entries()) {
    ctx.signal.throwIfAborted();
    ctx.progress({ phase: 'evaluating', size: codebook.size, targetSize, fraction: n / total, message: `codebook of ${codebook.size} on ${images.length} images` });
    const result = (await runEvaluationTask({ op: 'evaluate', codebook: toTaskCodebook(codebook), images: inputs }, ctx.signal)) as EvaluateResult;
    results.push({ codebook, result });
  }
  let points: BaselineResultPoint[] = [];
  if (needBaselines) {
    ctx.signal.throwIfAborted();
    ctx.progress({ phase: 'baselines', fraction: codebooks.length / total, message: 'reference codecs on the held-out images' });
    points = (await runEvaluationTask({ op: 'baselines', images: inputs, color }, ctx.signal)) as BaselineResultPoint[];
  }
  ctx.signal.throwIfAborted();
  ctx.progress({ phase: 'saving', fraction: 1 });
  await ctx.complete(async (tx: Repositories) => {
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
    await measure(codebooks, images, run.heldOutHash, run.normalized.color, ctx);
    return;
  }
  const codebook = await db.repos.codebooks.findById(input.codebookId);
  if (!codebook) throw new Error(`codebook ${input.codebookId} no longer exists`);
  const ids = input.payload.heldOutImageIds;
  const images = await db.repos.runs.teamImages(job.teamId, ids);
  if (images.length !== ids.length) throw new Error('some of the images to evaluate on were deleted');
  // The key is taken from the images as they are now, as the run's is, not trusted from the payload.
  await measure([codebook], images, heldOutHash(images.map((i) => i.sha256)), codebook.color, ctx);
};
