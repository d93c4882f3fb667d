// One measured case in a process of its own, for `npm run bench`: prints the process's resident memory before and at
// its peak, as one JSON line, so memory can be set against the estimate the studio enforces (TRAINING_MAX_BYTES).
//   node --import tsx scripts/bench-memory.ts train VECTORS.npy K INIT MAX_ITERATIONS
//     training on vectors already in memory, with the estimate of engine/memory/training-memory.ts
//   node --import tsx scripts/bench-memory.ts decode stream|all COLOR SAMPLE IMAGE…
//     the training-vector step of a job: images decoded one at a time (the job's task) or all at once (before)
import { readFileSync } from 'node:fs';
import { sharedVectors, shutdownEngineWorkers, threadBudget, train } from '../server/engine/training/index';
import type { InitMethod } from '../server/engine/core/types';
import { INIT } from '../server/engine/vocabulary';
import { decodedImageBytes, imagesToTrainingVectors, loadImage, readImageSize, trainingMemory, type ColorMode } from '../server/engine/index';
import { readNpy } from '../server/engine/io/npy';
import trainingVectors from '../server/jobs/tasks/training-vectors.task';

/** Samples RSS every 2 ms (and whenever `sample` is called) until stopped; returns the peak. */
function peakTracker() {
  const baseline = process.memoryUsage().rss;
  let peak = baseline;
  const sample = () => {
    const rss = process.memoryUsage().rss;
    if (rss > peak) peak = rss;
  };
  const timer = setInterval(sample, 2);
  return {
    baseline,
    sample,
    stop: () => {
      sample();
      clearInterval(timer);
      return peak;
    },
  };
}

async function trainCase([file, kText, init, iterationsText]: string[]): Promise<void> {
  const matrix = readNpy(readFileSync(file), file);
  const d = matrix.cols;
  // As the training job holds them (server/jobs/handlers/train.ts): in shared memory, converted once.
  const vectors = sharedVectors(matrix.data);
  const k = Number(kText);
  // Workers started and kernels compiled first (a pass big enough to go to the workers): their fixed cost is
  // not training memory.
  await train(vectors.subarray(0, Math.min(matrix.rows, 65_536) * d), d, { k: 64, init: INIT.random, seed: 1, maxIterations: 2 });
  global.gc?.();
  const tracker = peakTracker();
  const t0 = performance.now();
  const result = await train(vectors, d, { k, init: init as InitMethod, seed: 1, maxIterations: Number(iterationsText), onIteration: tracker.sample });
  const seconds = (performance.now() - t0) / 1000;
  const peak = tracker.stop();
  // What run creation would estimate beyond the vectors themselves (no image: these vectors come from a file).
  const m = trainingMemory({ vectors: matrix.rows, dimension: d, codebookSize: k, threads: threadBudget.total, largestImage: null, color: 'luma' });
  process.stdout.write(
    `${JSON.stringify({ trainingBytes: vectors.byteLength, baseline: tracker.baseline, peak, seconds, codebooks: result.codebooks.length, estimatedExtra: m.totalBytes - m.vectorBytes })}\n`,
  );
  await shutdownEngineWorkers();
}

async function decodeCase([mode, color, sampleText, ...files]: string[]): Promise<void> {
  const patch = { width: 4, height: 4 };
  const sample = Number(sampleText);
  const sized = [];
  for (const [i, path] of files.entries()) sized.push({ path, name: `image-${i}`, ...(await readImageSize(path)) });
  const decodedBytes = sized.map((f) => decodedImageBytes(f.width, f.height, color as ColorMode));
  const tracker = peakTracker();
  let vectorBytes: number;
  if (mode === 'stream') {
    // The job's own task, as a pool thread runs it (no limit here: the peak is what is measured).
    const vectors = await trainingVectors({ files: sized, color: color as ColorMode, patch, sample, seed: 1, meanBits: 0 }, { memoryLimitBytes: null });
    vectorBytes = vectors.byteLength;
  } else {
    const images = [];
    for (const f of sized) {
      images.push(await loadImage(f.path, color as ColorMode, f.name));
      tracker.sample();
    }
    vectorBytes = imagesToTrainingVectors(images, { patch, sample, seed: 1 }).vectors.byteLength;
  }
  const peak = tracker.stop();
  process.stdout.write(
    `${JSON.stringify({ mode, images: files.length, vectorBytes, largestImageBytes: Math.max(...decodedBytes), allImagesBytes: decodedBytes.reduce((a, b) => a + b, 0), baseline: tracker.baseline, peak })}\n`,
  );
}

const [kind, ...rest] = process.argv.slice(2);
(kind === 'decode' ? decodeCase(rest) : trainCase(kind === 'train' ? rest : [kind, ...rest])).catch((err: unknown) => {
  process.stderr.write(`bench-memory: ${err instanceof Error ? err.message : String(err)}\n`);
  process.exitCode = 1;
});
