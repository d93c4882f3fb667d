import { availableParallelism } from 'node:os';
import path from 'node:path';
import { z } from 'zod';
import { optionalString, redisUrl } from '../config/env';
import { WORKER_TOKEN_MIN_LENGTH } from '../config/worker-token';

/**
 * A compute worker's settings (`npm run worker`), parsed once. A worker needs the studio's address, the studio's
 * Redis and the worker token; it never reads the studio's database settings.
 */
const schema = z.object({
  CELLWRIGHT_URL: z.string().url('CELLWRIGHT_URL must be the studio\u2019s address, e.g. http://studio.example:8420'),
  REDIS_URL: redisUrl,
  WORKER_TOKEN: optionalString.pipe(z.string().min(WORKER_TOKEN_MIN_LENGTH, `WORKER_TOKEN must be at least ${WORKER_TOKEN_MIN_LENGTH} characters`).optional()),
  WORKER_TOKEN_FILE: optionalString,
  DATA_DIR: z.string().min(1).default('data'),
  // Originals the worker fetched, by SHA-256 (verified): a task on the same images fetches nothing again.
  WORKER_CACHE_DIR: optionalString,
  ENGINE_THREADS: z.coerce.number().int().min(1).optional(),
  JOB_TASK_MAX_HEAP_MB: z.coerce.number().int().min(32).default(4096),
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
});

export interface WorkerConfig {
  studioUrl: string;
  redisUrl: string;
  workerToken: { value?: string; file: string };
  cacheDir: string;
  engineThreads: number;
  taskMaxHeapMb: number;
  logLevel: string;
}

export function loadWorkerConfig(source: NodeJS.ProcessEnv = process.env): WorkerConfig {
  const parsed = schema.safeParse(source);
  if (!parsed.success) {
    const first = parsed.error.issues[0];
    throw new Error(`${first.path.join('.') || 'settings'}: ${first.message}`);
  }
  const e = parsed.data;
  const dataDir = path.resolve(e.DATA_DIR);
  return {
    studioUrl: e.CELLWRIGHT_URL.replace(/\/+$/, ''),
    redisUrl: e.REDIS_URL,
    workerToken: { value: e.WORKER_TOKEN, file: path.resolve(e.WORKER_TOKEN_FILE ?? path.join(dataDir, 'secrets', 'worker-token')) },
    cacheDir: path.resolve(e.WORKER_CACHE_DIR ?? path.join(dataDir, 'worker-cache')),
    engineThreads: e.ENGINE_THREADS ?? availableParallelism(),
    taskMaxHeapMb: e.JOB_TASK_MAX_HEAP_MB,
    logLevel: e.LOG_LEVEL,
  };
}
