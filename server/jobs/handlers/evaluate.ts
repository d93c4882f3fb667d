import type { Repositories } from '../../db';
import type { CodebookWithCodewords } from '../../db/repositories/codebooks';
import type { EvaluationImageMetrics } from '../../db/repositories/evaluations';
import type { RunImageRecord } from '../../db/repositories/runs';
import { heldOutHash } from '../../services/held-out-hash';
import { toTaskCodebook } from '../../services/task-codebook';
import type { ImageRef, ServedBy } from '../compute/tasks';
import { pooledResult, type BaselineResultPoint } from '../tasks/evaluate.task';
import type { JobContext, JobHandler } from '../types';
import type { EvaluateBatchPayload } from '../../contracts';

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

/** One image list measured: every codebook's pooled and per-image figures, and the reference codecs' points per colour. */
interface MeasuredList {
  heldOutHash: string;
  images: RunImageRecord[];
  results: { codebook: CodebookWithCodewords; result: ReturnType<typeof pooledResult> }[];
  baselines: { color: 'luma' | 'rgb'; points: BaselineResultPoint[] }[];
}

/** The share of the job's progress bar one list takes, and what the bar says meanwhile. */
interface ListSpan {
  from: number;
  to: number;
  label: string;
}

async function measureList(
  { id: jobId, teamId }: { id: number; teamId: number },
  codebooks: CodebookWithCodewords[],
  images: RunImageRecord[],
  heldOutHash: string,
  colors: readonly ('luma' | 'rgb')[],
  ctx: JobContext<'evaluate'>,
  servedBy: ServedBy[],
  span: ListSpan,
): Promise<MeasuredList> {
  const { db, compute } = ctx.deps;
  if (images.length === 0) throw new Error('There are no held-out images to evaluate on');
  const refs: ImageRef[] = images.map((i) => ({ sha256: i.sha256, name: i.fileName, width: i.width, height: i.height }));
  const task = { signal: ctx.signal, progress: () => undefined };
  const needBaselines: ('luma' | 'rgb')[] = [];
  for (const color of colors) if ((await db.repos.baselines.count(heldOutHash, color)) === 0) needBaselines.push(color);
  const targetSize = codebooks.reduce((m, c) => Math.max(m, c.size), 0);
  // Every codebook's images in a few groups, and the reference codecs, all handed out at once: as many workers as
  // there are share the job. The groups depend on the image list alone, and measurements are pooled in image order,
  // so the figures are the same bits however many workers took part.
  const groups = imageGroups(refs);
  let finished = 0;
  const taskCount = codebooks.length * groups.length + needBaselines.length * BASELINE_WEIGHT;
  const message = `${span.label}${codebooks.length} codebooks on ${images.length} images`;
  const report = () => ctx.progress({ phase: 'evaluating', targetSize, fraction: Math.min(0.99, span.from + ((span.to - span.from) * finished) / taskCount), message });
  const tick = (weight = 1) => {
    finished += weight;
    report();
  };
  report();
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
  const referencing = needBaselines.map((color) =>
    compute.run({ kind: 'baselines', jobId, teamId, images: refs, color }, task).then((done) => {
      servedBy.push(done.servedBy);
      tick(BASELINE_WEIGHT);
      return { color, points: done.result };
    }),
  );
  const [results, baselines] = await Promise.all([Promise.all(measuring), Promise.all(referencing)]);
  ctx.signal.throwIfAborted();
  return { heldOutHash, images, results, baselines };
}

/** Writes every list's results with the job's success: all of them or none. */
async function commitLists(jobId: number, lists: MeasuredList[], servedBy: ServedBy[], ctx: JobContext<'evaluate'>): Promise<void> {
  ctx.progress({ phase: 'saving', fraction: 1 });
  await ctx.complete(async (tx: Repositories) => {
    await tx.jobs.recordServedBy(jobId, distinctWorkers(servedBy));
    for (const { heldOutHash, images, results, baselines } of lists) {
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
      for (const { color, points } of baselines) await tx.baselines.insertMissing(heldOutHash, color, points);
    }
  });
}

/**
 * A batch: each codebook on each list, the lists one after another (each list's codebooks at once), committed
 * together. A codebook deleted or an image removed since the batch was queued fails the job with the reason.
 */
async function evaluateBatch(job: { id: number; teamId: number }, payload: EvaluateBatchPayload, ctx: JobContext<'evaluate'>): Promise<void> {
  const { db } = ctx.deps;
  const codebooks: CodebookWithCodewords[] = [];
  for (const id of payload.codebookIds) {
    const codebook = await db.repos.codebooks.findById(id);
    if (!codebook || codebook.teamId !== job.teamId) throw new Error(`codebook ${id} no longer exists`);
    codebooks.push(codebook);
  }
  const colors = [...new Set(codebooks.map((c) => c.color))];
  const servedBy: ServedBy[] = [];
  const lists: MeasuredList[] = [];
  const n = payload.sets.length;
  for (const [i, set] of payload.sets.entries()) {
    const images = await db.repos.runs.teamImages(job.teamId, set.imageIds);
    if (images.length !== set.imageIds.length) throw new Error(`some images of ${set.name} were deleted since the evaluation was queued`);
    // The key is taken from the images as they are now, as the run's is, not trusted from the payload.
    const key = heldOutHash(images.map((im) => im.sha256));
    const label = n > 1 ? `${set.name} (${i + 1} of ${n}): ` : '';
    lists.push(await measureList(job, codebooks, images, key, colors, ctx, servedBy, { from: i / n, to: (i + 1) / n, label }));
  }
  await commitLists(job.id, lists, servedBy, ctx);
}

/**
 * Measures every codebook of the job's run on the run's held-out images, or the codebooks of a batch on its image
 * lists (one codebook on one list included), fills the reference codec cache for each list, and commits the
 * results with the job's success.
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
    const servedBy: ServedBy[] = [];
    const list = await measureList(job, codebooks, images, run.heldOutHash, [run.normalized.color], ctx, servedBy, { from: 0, to: 1, label: '' });
    await commitLists(job.id, [list], servedBy, ctx);
    return;
  }
  if ('sets' in input.payload) return evaluateBatch(job, input.payload, ctx);
  // A one-codebook evaluation queued before batches existed: the same as a batch of one codebook on one list.
  await evaluateBatch(job, { codebookIds: [input.codebookId!], sets: [{ setId: null, name: 'chosen images', imageIds: input.payload.heldOutImageIds, heldOutHash: input.payload.heldOutHash }] }, ctx);
};
