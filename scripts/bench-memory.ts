// One training run in a process of its own, for `npm run bench`: prints the process's resident memory before and
// at its peak during training, as one JSON line, so training memory can be set against the training set's size.
//   node --import tsx scripts/bench-memory.ts VECTORS.npy K INIT MAX_ITERATIONS
import { readFileSync } from 'node:fs';
import { sharedVectors, shutdownEngineWorkers, train } from '../server/engine/core/index';
import type { InitMethod } from '../server/engine/core/types';
import { readNpy } from '../server/engine/io/npy';

async function main(): Promise<void> {
  const [file, kText, init, iterationsText] = process.argv.slice(2);
  const matrix = readNpy(readFileSync(file), file);
  const d = matrix.cols;
  // As the training job holds them (server/jobs/handlers/train.ts): in shared memory, converted once.
  const vectors = sharedVectors(matrix.data);
  const k = Number(kText);
  // Workers started and kernels compiled first (a pass big enough to go to the workers): their fixed cost is
  // not training memory.
  await train(vectors.subarray(0, Math.min(matrix.rows, 65_536) * d), d, { k: 64, init: 'random', seed: 1, maxIterations: 2 });
  global.gc?.();
  const baseline = process.memoryUsage().rss;
  let peak = baseline;
  const sample = () => {
    const rss = process.memoryUsage().rss;
    if (rss > peak) peak = rss;
  };
  const timer = setInterval(sample, 2);
  const t0 = performance.now();
  const result = await train(vectors, d, { k, init: init as InitMethod, seed: 1, maxIterations: Number(iterationsText), onIteration: sample });
  const seconds = (performance.now() - t0) / 1000;
  sample();
  clearInterval(timer);
  process.stdout.write(
    `${JSON.stringify({ trainingBytes: vectors.byteLength, baseline, peak, seconds, codebooks: result.codebooks.length })}\n`,
  );
  await shutdownEngineWorkers();
}

main().catch((err: unknown) => {
  process.stderr.write(`bench-memory: ${err instanceof Error ? err.message : String(err)}\n`);
  process.exitCode = 1;
});
