import type { NormalizedRunConfig } from '../../contracts';
import type { NewCodebook, RunRecord } from '../../db';
import { makeCodebook, structureFromInfo, toCodebookDocument, trainsEverySize, type IterationStat } from '../../engine';
import { runTrainingMemory, trainingMemoryExcess } from '../../services/training-memory';
import { TRAINED } from '../compute/execute';
import type { TrainedSize } from '../compute/tasks';
import type { JobHandler } from '../types';

interface Pass {
  k: number;
  /** Sizes of this pass's output to keep. */
  keep: Set<number>;
}

/**
 * Split init grows every size 1, 2, 4, … up to 2^to in one LBG pass, so one pass yields the whole sweep;
 * random and k-means++ start each size afresh, one pass per kept size.
 */
export function trainingPasses(cfg: Pick<NormalizedRunConfig, 'init' | 'sizes'>): Pass[] {
  if (trainsEverySize(cfg.init)) return [{ k: Math.max(...cfg.sizes), keep: new Set(cfg.sizes) }];
  return cfg.sizes.map((k) => ({ k, keep: new Set([k]) }));
}

/** A stored codebook's name: the run's, with what sets it apart from the run's other codebooks. */
function codebookName(runName: string, book: TrainedSize, bits: number): string {
  const s = book.structure;
  if (!s) return `${runName} b${bits}`;
  if (s.kind === 'entropy-constrained') return `${runName} λ${s.lambda}`;
  if (s.kind === 'residual') return `${runName} residual ${s.bits.join('+')}`;
  return `${runName} tree ${book.trace.length - 1} levels`;
}

function toNewCodebook(run: RunRecord, book: TrainedSize, path: IterationStat[], vectorCount: number, dimension: number): NewCodebook {
  const cfg = run.normalized;
  const channels = cfg.color === 'rgb' ? 3 : 1;
  const preprocessing = cfg.meanBits > 0 ? ({ kind: 'mean-removed', meanBits: cfg.meanBits } as const) : ({ kind: 'none' } as const);
  const codebook = makeCodebook({
    size: book.size,
    dimension,
    patch: { width: cfg.patch.width, height: cfg.patch.height, channels, color: cfg.color },
    preprocessing,
    codewords: book.codewords,
    usage: book.usage,
    ...(book.structure ? { structure: structureFromInfo(book.structure) } : {}),
    training: {
      source: `run ${run.id} "${run.name}" (${cfg.trainingImageIds.length} training images)`,
      vectorCount,
      init: cfg.init,
      epsilon: cfg.epsilon,
      seed: cfg.seed,
      iterations: book.iterations,
      distortion: book.distortion,
      trace: path,
      maxIterations: cfg.maxIterations,
      sample: cfg.maxVectors,
      ...(cfg.stride === undefined ? {} : { stride: cfg.stride }),
    },
  });
  const { codewords: _omit, ...metadata } = toCodebookDocument(codebook);
  return {
    teamId: run.teamId,
    runId: run.id,
    name: codebookName(run.name, book, codebook.bits),
    source: 'trained',
    bits: codebook.bits,
    size: codebook.size,
    dimension,
    patch: cfg.patch,
    channels,
    color: cfg.color,
    meanBits: cfg.meanBits,
    codewords: codebook.codewords,
    usage: Array.from(codebook.usage),
    cellDistortion: Array.from(book.cellDistortion),
    trace: path,
    metadata,
    checksum: codebook.checksum,
  };
}

/** The fields the export format records per iteration; the core's stats carry more (search counters). */
function traceEntry(s: IterationStat): IterationStat {
  const entry: IterationStat = { size: s.size, iteration: s.iteration, distortion: s.distortion, emptyRepaired: s.emptyRepaired, elapsedMs: s.elapsedMs };
  if (s.redecided !== undefined) entry.redecided = s.redecided;
  return entry;
}

/**
 * Trains every codebook size of a run and writes them all at once: the old set of the run (left by an
 * interrupted attempt) is deleted in the same transaction, so exactly one set exists whatever happened before.
 */
export const trainHandler: JobHandler<'train'> = async (job, ctx) => {
  const { db } = ctx.deps;
  const run = await db.repos.runs.findById(ctx.input.runId);
  if (!run) throw new Error(`run ${ctx.input.runId} no longer exists`);
  const cfg = run.normalized;
  const dimension = cfg.patch.width * cfg.patch.height * (cfg.color === 'rgb' ? 3 : 1);

  const images = await db.repos.runs.imagesOf(run.id, 'training');
  if (images.length === 0) throw new Error('the run has no training images');
  // Checked at creation too; again here for a run queued before the cap was lowered.
  const excess = trainingMemoryExcess(runTrainingMemory(cfg, images, ctx.deps.training), ctx.deps.training.maxBytes);
  if (excess) throw new Error(excess.message);

  // The training itself is a compute task: the studio's own worker or one that joined takes it, samples the same
  // vectors from the same images and seed, and trains every pass.
  const { result, servedBy } = await ctx.deps.compute.run(
    {
      kind: 'train',
      jobId: job.id,
      teamId: run.teamId,
      images: images.map((i) => ({ sha256: i.sha256, name: i.fileName, width: i.width, height: i.height })),
      dimension,
      color: cfg.color,
      patch: cfg.patch,
      ...(cfg.stride === undefined ? {} : { stride: cfg.stride }),
      meanBits: cfg.meanBits,
      init: cfg.init,
      epsilon: cfg.epsilon,
      maxIterations: cfg.maxIterations,
      maxVectors: cfg.maxVectors,
      seed: cfg.seed,
      passes: cfg.structure ? [] : trainingPasses(cfg).map((p) => ({ k: p.k, keep: [...p.keep] })),
      ...(cfg.lambdas ? { lambdas: cfg.lambdas } : {}),
      ...(cfg.structure ? { structured: { ...cfg.structure, bits: cfg.sizes.map((k) => Math.log2(k)) } } : {}),
    },
    { signal: ctx.signal, progress: (p) => ctx.progress(p) },
  );
  const made = result.codebooks.map((book) => toNewCodebook(run, book, book.trace.map(traceEntry), result.vectorCount, dimension));

  ctx.progress({ phase: 'saving', fraction: TRAINED, message: `writing ${made.length} codebooks` });
  await ctx.complete(async (tx) => {
    await tx.jobs.recordServedBy(job.id, [servedBy]);
    await tx.codebooks.deleteForRun(run.id);
    for (const c of made) await tx.codebooks.insert(c);
    await tx.jobs.insert({ teamId: run.teamId, runId: run.id, kind: 'evaluate', createdBy: job.createdBy });
  });
};
