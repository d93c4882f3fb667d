import type { JobProgress } from '../../contracts';
import {
  assignEcvq, encodeResidual, encodeTree, greedyTreePlan, MAX_ITERATIONS, parseStages, shardLayout, structureInfo, structuredTrace, train, trainEcvq, trainResidual, trainTree, type TreeOptions,
} from '../../engine';
import type { TaskPool } from '../pool';
import type { ImageMeasurement } from '../../engine';
import type { BaselineResultPoint, EvaluateTask, TaskImage } from '../tasks/evaluate.task';
import type { TrainingVectorsInput } from '../tasks/training-vectors.task';
import type { ShardSpread, SpreadShards } from './shard-coordinator';
import type { TrainingSample } from './shard-wire';
import type { AnomalyTaskResult, DenoiseTaskResult, ModelTask, TaskCalibration } from '../tasks/model.task';
import type { ComputeTask, ImageRef, ModelComputeTask, TrainedSize, TrainOutcome, TrainTask } from './tasks';

const trainingVectorsTask = new URL('../tasks/training-vectors.task.ts', import.meta.url).href;
const evaluateTask = new URL('../tasks/evaluate.task.ts', import.meta.url).href;
const modelTask = new URL('../tasks/model.task.ts', import.meta.url).href;

// Share of a training task's progress each phase takes; training dominates the time.
export const LOADED = 0.05;
export const TRAINED = 0.97;

export interface ExecuteContext {
  /** The local path of an original: the content store on the studio, the digest-keyed cache on a remote worker. */
  resolveImage(image: ImageRef, signal: AbortSignal): Promise<string>;
  /** Pool threads for decoding and evaluation (they would block the event loop). */
  pool: TaskPool;
  signal: AbortSignal;
  progress(p: JobProgress): void;
  /** Spreads a training pass's shards over the live workers (absent: every shard is computed here). */
  spread?: ShardSpread;
}

/** Where a sample's originals are found and decoded. */
export type SampleContext = Pick<ExecuteContext, 'resolveImage' | 'pool' | 'signal'>;

async function localImages(images: ImageRef[], ctx: SampleContext): Promise<TaskImage[]> {
  const out: TaskImage[] = [];
  for (const image of images) {
    ctx.signal.throwIfAborted();
    out.push({ path: await ctx.resolveImage(image, ctx.signal), name: image.name, width: image.width, height: image.height });
  }
  return out;
}

/** Draws a run's training vectors: the same sample for a given image list and seed wherever it runs. */
export async function loadTrainingSample(sample: TrainingSample, ctx: SampleContext): Promise<Float32Array> {
  const files = await localImages(sample.images, ctx);
  const input: TrainingVectorsInput = { files, color: sample.color, patch: sample.patch, stride: sample.stride, sample: sample.maxVectors, seed: sample.seed, meanBits: sample.meanBits };
  // The pool thread hands the vectors over in shared memory: every pass's search threads read this one copy.
  return ctx.pool.run<TrainingVectorsInput, Float32Array>(trainingVectorsTask, input, { signal: ctx.signal });
}

/** Samples the run's training vectors and trains every pass, its shards spread over the live workers when there are several. */
async function trainTask(task: TrainTask, ctx: ExecuteContext): Promise<TrainOutcome> {
  ctx.progress({ phase: 'loading', fraction: 0, message: `decoding ${task.images.length} training images` });
  const sample: TrainingSample = {
    images: task.images, color: task.color, patch: task.patch, ...(task.stride === undefined ? {} : { stride: task.stride }), maxVectors: task.maxVectors, seed: task.seed, meanBits: task.meanBits, dimension: task.dimension,
  };
  const vectors = await loadTrainingSample(sample, ctx);
  const vectorCount = vectors.length / task.dimension;
  const { spread } = ctx;
  // Spreading pays only with several shards and several workers; either way the codebooks are the same bits.
  const spreading = spread !== undefined && shardLayout(vectorCount).count > 1 && (await spread.liveWorkers()) > 1;
  const openShards = spreading
    ? ({ maxK, signal }: { maxK: number; signal?: AbortSignal }) => spread.open({ jobId: task.jobId, teamId: task.teamId, sample, vectors, maxK, signal })
    : undefined;
  ctx.progress({ phase: 'training', fraction: LOADED, message: `${vectorCount} training vectors of ${task.dimension} components` });

  const totalWeight = task.passes.reduce((s, p) => s + p.k, 0);
  let doneWeight = 0;
  const codebooks: TrainOutcome['codebooks'] = [];
  for (const pass of task.passes) {
    const result = await train(vectors, task.dimension, {
      k: pass.k,
      init: task.init,
      epsilon: task.epsilon,
      maxIterations: task.maxIterations,
      seed: task.seed,
      signal: ctx.signal,
      openShards,
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
    const path: TrainOutcome['codebooks'][number]['trace'] = [];
    const keep = new Set(pass.keep);
    for (const book of result.codebooks) {
      path.push(...book.trace);
      if (keep.has(book.size)) {
        codebooks.push({ size: book.size, codewords: book.codewords, usage: book.usage, cellDistortion: book.cellDistortion, distortion: book.distortion, iterations: book.iterations, trace: [...path] });
      }
    }
    doneWeight += pass.k;
  }
  if (task.lambdas && task.lambdas.length > 0) codebooks.push(...(await entropyConstrained(task, task.lambdas, vectors, codebooks, ctx, openShards)));
  if (task.structured) codebooks.push(...(await structuredBooks(task, task.structured, vectors, ctx, openShards)));
  return { vectorCount, codebooks };
}

/**
 * Anomaly scores (the calibration on the training images first, then the images scored) or denoising, on pool
 * threads; pure float64 over the codebook and the pixels, so the result does not depend on which worker ran it.
 */
async function modelComputeTask(task: ModelComputeTask, ctx: ExecuteContext): Promise<AnomalyTaskResult | DenoiseTaskResult> {
  ctx.progress({ phase: 'loading', fraction: 0, message: `reading ${task.images.length} images` });
  const images = await localImages(task.images, ctx);
  const run = <T>(t: ModelTask) => ctx.pool.run<ModelTask, T>(modelTask, t, { signal: ctx.signal });
  if (task.op === 'denoise') {
    ctx.progress({ phase: 'denoising', fraction: 0.1 });
    return run<DenoiseTaskResult>({ op: 'denoise', codebook: task.codebook, cellDistortion: task.cellDistortion, image: images[0], sigma: task.sigma, seed: task.seed, step: task.step });
  }
  let calibration: TaskCalibration | null = null;
  if (task.training > 0) {
    ctx.progress({ phase: 'calibrating', fraction: 0.1, message: `scoring the training patches of ${task.training} images` });
    calibration = await run<TaskCalibration>({ op: 'calibrate', codebook: task.codebook, training: images.slice(0, task.training) });
  }
  ctx.progress({ phase: 'scoring', fraction: 0.6, message: `scoring ${images.length - task.training} images` });
  return run<AnomalyTaskResult>({
    op: 'anomaly', codebook: task.codebook, cellDistortion: task.cellDistortion, calibration, images: images.slice(task.training), rate: task.rate, score: task.score, limit: task.limit,
  });
}

/** Opens a training's shards on the live workers (absent: every shard is computed here); the same bits either way. */
type OpenSpread = (set: { maxK: number; signal?: AbortSignal }) => Promise<SpreadShards>;

/**
 * One entropy-constrained codebook per λ (engine training/ecvq.ts), each from the largest full-search codebook of the
 * run, its passes spread over the workers' shards when the run's Lloyd passes are. Its per-cell errors are those of
 * the encoder it will be coded with (Huffman lengths), on the training vectors.
 */
async function entropyConstrained(
  task: TrainTask, lambdas: number[], vectors: Float32Array, full: TrainedSize[], ctx: ExecuteContext, openShards?: OpenSpread,
): Promise<TrainedSize[]> {
  const start = full.reduce((a, b) => (b.size > a.size ? b : a));
  const out: TrainedSize[] = [];
  for (const [i, lambda] of lambdas.entries()) {
    ctx.progress({ phase: 'training', fraction: TRAINED, message: `entropy-constrained codebook ${i + 1} of ${lambdas.length} (λ = ${lambda})` });
    const r = await trainEcvq(vectors, task.dimension, start.codewords, {
      lambda, epsilon: task.epsilon, maxIterations: task.maxIterations, signal: ctx.signal,
      openShards: openShards ? ({ signal }) => openShards({ maxK: start.size, signal }) : undefined,
    });
    const { indices, errors } = assignEcvq(vectors, task.dimension, r.codewords, r.codeLengths, lambda);
    const cellDistortion = new Float64Array(r.size);
    for (let v = 0; v < indices.length; v += 1) cellDistortion[indices[v]] += errors[v];
    out.push({
      size: r.size,
      codewords: r.codewords,
      usage: r.usage,
      cellDistortion,
      distortion: r.distortion,
      iterations: r.iterations,
      trace: r.trace.map((t) => ({ size: t.size, iteration: t.iteration, distortion: t.distortion, emptyRepaired: t.emptied, elapsedMs: t.elapsedMs })),
      structure: { kind: 'entropy-constrained', lambda, codeLengths: Array.from(r.codeLengths) },
    });
  }
  return out;
}

/**
 * One tree (balanced to depth b) or residual codebook (stages sharing b) per b of the run (engine structures/). Usage
 * and per-cell errors are those of the codebook's own search on the training vectors: per node reached for a tree
 * (its leaves hold the errors), per table entry for residual stages (the last stage's entry holds a block's error).
 */
async function structuredBooks(
  task: TrainTask, plan: NonNullable<TrainTask['structured']>, vectors: Float32Array, ctx: ExecuteContext, openShards?: OpenSpread,
): Promise<TrainedSize[]> {
  const d = task.dimension;
  const out: TrainedSize[] = [];
  for (const [i, b] of plan.bits.entries()) {
    const fraction = LOADED + ((TRAINED - LOADED) * i) / plan.bits.length;
    const lloyd = { seed: task.seed, epsilon: task.epsilon, maxIterations: task.maxIterations, signal: ctx.signal };
    if (plan.kind === 'tree') {
      const greedy = plan.growth === 'greedy' ? greedyTreePlan(b) : null;
      ctx.progress({ phase: 'training', fraction, message: `${greedy ? `greedy tree pruned to ${b} bits` : `tree of depth ${b}`} (${i + 1} of ${plan.bits.length})` });
      const shape: Pick<TreeOptions, 'growth' | 'prune'> = greedy
        ? { growth: { kind: 'greedy', leaves: greedy.leaves, rate: greedy.growRate }, prune: { rate: greedy.pruneRate } }
        : { growth: { kind: 'balanced', depth: b } };
      // Every node's 2-means over the workers' shards when the run's passes are spread (the same tree either way).
      const r = await trainTree(vectors, d, { ...shape, ...lloyd, openShards: openShards ? ({ signal }) => openShards({ maxK: 2, signal }) : undefined });
      const codes = encodeTree(r.codewords, r.structure, vectors, d);
      const cellDistortion = new Float64Array(r.usage.length);
      for (let v = 0; v < codes.leaves.length; v += 1) cellDistortion[codes.leaves[v]] += codes.distances[v];
      out.push({
        size: r.usage.length, codewords: r.codewords, usage: r.usage, cellDistortion, distortion: r.treeDistortion,
        // The sum over every node's 2-means, capped at what the codebook format records.
        iterations: Math.min(r.iterations, MAX_ITERATIONS),
        // The growth, then the pruning sequence, as the command line records a tree's (one rule for the cap).
        trace: structuredTrace([...r.growth, ...(r.pruning ?? []).slice(1)].map((g) => ({ size: g.leaves, distortion: g.distortion })), r.usage.length, task.maxIterations),
        structure: structureInfo(r.structure) as TrainedSize['structure'],
      });
      continue;
    }
    const parsed = parseStages(String(plan.stages), b);
    if ('error' in parsed) throw new Error(parsed.error);
    ctx.progress({ phase: 'training', fraction, message: `residual stages ${parsed.bits.join(' + ')} (${i + 1} of ${plan.bits.length})` });
    const r = await trainResidual(vectors, d, {
      bits: parsed.bits, init: task.init, search: plan.mBest === null ? { kind: 'greedy' } : { kind: 'm-best', m: plan.mBest }, refinementPasses: plan.refinementPasses, ...lloyd,
    });
    const codes = encodeResidual(r.codewords, r.structure, vectors, d);
    const usage = new Uint32Array(r.tableCodewords);
    const cellDistortion = new Float64Array(r.tableCodewords);
    let offset = 0;
    codes.indices.forEach((stage, s) => {
      for (let v = 0; v < stage.length; v += 1) {
        usage[offset + stage[v]] += 1;
        if (s === codes.indices.length - 1) cellDistortion[offset + stage[v]] += codes.distances[v];
      }
      offset += 2 ** parsed.bits[s];
    });
    let table = 0;
    out.push({
      size: r.tableCodewords, codewords: r.codewords, usage, cellDistortion, distortion: r.distortion,
      iterations: Math.min(r.stages.reduce((a, st) => a + st.iterations, 0), MAX_ITERATIONS),
      trace: r.stages.map((st) => ({ size: (table += 2 ** st.bits), iteration: 0, distortion: st.distortion, emptyRepaired: 0, elapsedMs: 0 })),
      structure: structureInfo(r.structure) as TrainedSize['structure'],
    });
  }
  return out;
}

/** Runs one compute task where the worker is; the result goes back to the job that asked for it. */
export async function executeComputeTask(task: ComputeTask, ctx: ExecuteContext): Promise<unknown> {
  if (task.kind === 'train') return trainTask(task, ctx);
  if (task.kind === 'model') return modelComputeTask(task, ctx);
  const images = await localImages(task.images, ctx);
  const evaluation: EvaluateTask =
    task.kind === 'measure' ? { op: 'measure', codebook: task.codebook, images } : { op: 'baselines', images, color: task.color };
  return ctx.pool.run<EvaluateTask, ImageMeasurement[] | BaselineResultPoint[]>(evaluateTask, evaluation, { signal: ctx.signal });
}
