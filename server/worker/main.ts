// `npm run worker`: a compute worker that joins a running studio (same machine or another) and computes its tasks.
// It needs CELLWRIGHT_URL, REDIS_URL and the worker token (WORKER_TOKEN or WORKER_TOKEN_FILE); it never touches
// the studio's database: originals come over the studio's internal endpoint, results go back through Redis.
import { hostname } from 'node:os';
import { createLogger } from '../config/logger';
import { workerToken } from '../config/worker-token';
import { threadBudget } from '../engine';
import { executeComputeTask, loadTrainingSample } from '../jobs/compute/execute';
import { createComputeWorker } from '../jobs/compute/worker';
import { createTaskPool } from '../jobs/pool';
import { createStudioClient } from './studio-client';
import { loadWorkerConfig } from './worker-env';

async function main(): Promise<void> {
  let config;
  try {
    config = loadWorkerConfig();
  } catch (err) {
    process.stderr.write(`cellwright worker: ${(err as Error).message}\n`);
    process.exit(2);
  }
  const logger = createLogger(config.logLevel);
  const host = hostname();
  threadBudget.configure(config.engineThreads);
  const studio = createStudioClient({
    studioUrl: config.studioUrl,
    // Read at each registration: a token rotated on disk is picked up when the worker joins again.
    token: () => workerToken({ workerToken: config.workerToken }, { create: false }),
    host,
    threads: config.engineThreads,
    cacheDir: config.cacheDir,
  });
  let joined;
  try {
    joined = await studio.register();
  } catch (err) {
    process.stderr.write(`cellwright worker: cannot join ${config.studioUrl}: ${(err as Error).message}\n`);
    process.exit(1);
  }
  // One task at a time, so one pool thread for its decoding and measuring; the engine's kernels use ENGINE_THREADS.
  const pool = createTaskPool({ maxThreads: 1, maxHeapMb: config.taskMaxHeapMb });
  const worker = createComputeWorker({
    redisUrl: config.redisUrl,
    prefix: joined.prefix,
    identity: { workerId: joined.workerId, host, threads: config.engineThreads },
    leaseMs: joined.leaseMs,
    logger,
    execute: (task, ctx) => executeComputeTask(task, { ...ctx, pool, resolveImage: (image, signal) => studio.original(image, signal) }),
    loadSample: (sample, signal) => loadTrainingSample(sample, { pool, signal, resolveImage: (image, s) => studio.original(image, s) }),
  });
  await worker.start();
  process.stderr.write(`cellwright worker ${joined.workerId} joined ${config.studioUrl} with ${config.engineThreads} threads\n`);
  let stopping = false;
  const stop = async (signal: string) => {
    if (stopping) return;
    stopping = true;
    logger.info({ signal }, 'worker stopping; a task in hand goes back to the queue');
    await worker.stop();
    await pool.destroy();
    process.exit(0);
  };
  process.on('SIGINT', () => void stop('SIGINT'));
  process.on('SIGTERM', () => void stop('SIGTERM'));
}

void main();
