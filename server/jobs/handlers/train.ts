import type { NormalizedRunConfig } from '../../contracts';
import type { NewCodebook, RunImageRecord, RunRecord } from '../../db';
import { makeCodebook, sharedVectors, toCodebookDocument, train, trainsEverySize, type IterationStat, type TrainedCodebook } from '../../engine';
import { runTrainingMemory, trainingMemoryExcess } from '../../services/training-memory';
import type { TrainingVectorsInput } from '../tasks/training-vectors.task';
import type { JobContext, JobHandler } from '../types';

const trainingVectorsTask = new URL('../tasks/training-vectors.task.ts', import.meta.url).href;

// Share of the job's progress bar each phase takes; training dominates the time.
const LOADED = 0.05;
const TRAINED = 0.97;

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

function toNewCodebook(run: RunRecord, book: TrainedCodebook, path: IterationStat[], vectorCount: number, dimension: number): NewCodebook {
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
    },
  });
  const { codewords: _omit, ...metadata } = toCodebookDocument(codebook);
  return {
    teamId: run.teamId,
    runId: run.id,
    name: `${run.name} b${codebook.bits}`,
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

async function loadVectors(run: RunRecord, images: RunImageRecord[], ctx: JobContext<'train'>): Promise<Float32Array> {
  const { store, pool } = ctx.deps;
  const cfg = run.normalized;
  ctx.progress({ phase: 'loading', fraction: 0, message: `decoding ${images.length} training images` });
  const input: TrainingVectorsInput = {
    files: images.map((i) => ({ path: store.path(i.sha256), name: i.fileName, width: i.width, height: i.height })),
    color: cfg.color,
    patch: cfg.patch,
    sample: cfg.maxVectors,
    seed: cfg.seed,
    meanBits: cfg.meanBits,
  };
  return pool.run<TrainingVectorsInput, Float32Array>(trainingVectorsTask, input, { signal: ctx.signal });
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

  // The task hands the vectors over in shared memory already: every pass's workers read this one copy.
  const vectors = sharedVectors(await loadVectors(run, images, ctx));
  const vectorCount = vectors.length / dimension;
  ctx.progress({ phase: 'training', fraction: LOADED, message: `${vectorCount} training vectors of ${dimension} components` });

  const passes = trainingPasses(cfg);
  const totalWeight = passes.reduce((s, p) => s + p.k, 0);
  let doneWeight = 0;
  const made: NewCodebook[] = [];
  for (const pass of passes) {
    const result = await train(vectors, dimension, {
      k: pass.k,
      init: cfg.init,
      epsilon: cfg.epsilon,
      maxIterations: cfg.maxIterations,
      seed: cfg.seed,
      signal: ctx.signal,
      onProgress: (p) => {
        const within = (doneWeight + p.fraction * pass.k) / totalWeight;
        ctx.progress({
          phase: 'training',
          size: p.size,
          targetSize: p.targetSize,
          iteration: p.iteration,
          distortion: p.distortion,
          fraction: LOADED + (TRAINED - LOADED) * Math.min(1, within),
        });
      },
    });
    // Each codebook records the LBG path that led to it: for split, every smaller size first.
    const path: IterationStat[] = [];
    for (const book of result.codebooks) {
      path.push(...book.trace.map(traceEntry));
      if (pass.keep.has(book.size)) made.push(toNewCodebook(run, book, [...path], vectorCount, dimension));
    }
    doneWeight += pass.k;
  }

  ctx.progress({ phase: 'saving', fraction: TRAINED, message: `writing ${made.length} codebooks` });
  await ctx.complete(async (tx) => {
    await tx.codebooks.deleteForRun(run.id);
    for (const c of made) await tx.codebooks.insert(c);
    await tx.jobs.insert({ teamId: run.teamId, runId: run.id, kind: 'evaluate', createdBy: job.createdBy });
  });
};
