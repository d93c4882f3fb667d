import type { Repositories } from '../../db';
import type { CodebookWithCodewords } from '../../db/repositories/codebooks';
import type { EvaluationImageMetrics } from '../../db/repositories/evaluations';
import type { RunImageRecord } from '../../db/repositories/runs';
import { heldOutHash } from '../../services/held-out-hash';
import { toTaskCodebook } from '../../services/task-codebook';
import type { ImageRef, ServedBy } from '../compute/tasks';
import { pooledResult, type BaselineResultPoint } from '../tasks/evaluate.task';
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
/** Images per measuring task: at most this many groups of consecutive images per codebook, fixed by the list alone. */
const MEASURE_GROUPS = 8;

function imageGroups(refs: ImageRef[]): ImageRef[][] {
  const count = Math.min(refs.length, MEASURE_GROUPS);
  const size = Math.ceil(refs.length / count);
  const out: ImageRef[][] = [];
  for (let i = 0; i < refs.length; i += size) out.push(refs.slice(i, i + size));
  return out;
}

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
  const targetSize = codebooks.reduce((m, c) => Math.max(m, c.size), 0);
  // Every codebook's images in a few groups, and the reference codecs, all handed out at once: as many workers as
  // there are share the job. The groups depend on the image list alone, and measurements are pooled in image order,
  // so the figures are the same bits however many workers took part.
  const groups = imageGroups(refs);
  let finished = 0;
  const taskCount = codebooks.length * groups.length + (needBaselines ? BASELINE_WEIGHT : 0);
  const tick = (weight = 1) => {
    finished += weight;
    ctx.progress({ phase: 'evaluating', targetSize, fraction: Math.min(0.99, finished / taskCount), message: `${codebooks.length} codebooks on ${images.length} images` });
  };
  ctx.progress({ phase: 'evaluating', targetSize, fraction: 0, message: `${codebooks.length} codebooks on ${images.length} images` });
  const measuring = codebooks.map(async (codebook) => {
    const taskCodebook = toTaskCodebook(codebook);
    const parts = await Promise.all(
      groups.map(async (group) => {
        const done = await compute.run({ kind: 'measure', jobId, teamId, codebook: taskCodebook, images: group }, task);
        servedBy.push(done.servedBy);
        tick();
        return done.result;
      }),
    );
    return { codebook, result: pooledResult(taskCodebook, parts.flat()) };
  });
  const referencing = needBaselines
    ? compute.run({ kind: 'baselines', jobId, teamId, images: refs, color }, task).then((done) => {
        servedBy.push(done.servedBy);
        tick(BASELINE_WEIGHT);
        return done.result;
      })
    : Promise.resolve([] as BaselineResultPoint[]);
  const [results, points] = await Promise.all([Promise.all(measuring), referencing]);
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
