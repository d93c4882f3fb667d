import { z } from 'zod';


/** POST /internal/v1/workers (Authorization: Bearer <worker token>) → 201 */
export const registerWorkerBody = z
  .object({
    /** The worker machine's name, for the workers page. */
    host: z.string().trim().min(1).max(253),
    /** ENGINE_THREADS of the worker. */
    threads: z.number().int().min(1).max(1024),
  })
  .strict();
export type RegisterWorkerBody = z.infer<typeof registerWorkerBody>;

export const registerWorkerResponse = z.object({
  workerId: z.string(),
  /** Bearer secret for the internal endpoints; ends when the worker token is rotated. */
  session: z.string(),
  /** The studio's key prefix in Redis (its queues and channels). */
  prefix: z.string(),
  /** JOB_LEASE_MS of the studio: how long a task's lock lasts unrenewed. */
  leaseMs: z.number().int(),
});
export type RegisterWorkerResponse = z.infer<typeof registerWorkerResponse>;

/** GET /internal/v1/originals/:sha256 (Authorization: Bearer <worker session>) → the original's bytes */
export const originalParams = z.object({ sha256: z.string().regex(/^[0-9a-f]{64}$/, 'a SHA-256 digest in lower-case hex') }).strict();

export const workerTask = z.object({
  /** Training a run, measuring codebooks on held-out images, or the reference codecs on them. */
  kind: z.enum(['train', 'measure', 'baselines', 'model']),
  /** Null when the job belongs to another team (the page names only the caller's team's jobs). */
  jobId: z.number().int().nullable(),
  since: z.string(),
});

export const workerSummary = z.object({
  workerId: z.string(),
  host: z.string(),
  threads: z.number().int(),
  startedAt: z.string(),
  lastBeat: z.string(),
  task: workerTask.nullable(),
});
export type WorkerSummary = z.infer<typeof workerSummary>;

/** GET /api/teams/:teamId/workers (admins) */
export const workersResponse = z.object({
  workers: z.array(workerSummary),
  /** Jobs waiting to start and running; compute tasks waiting for a worker and being computed. */
  queue: z.object({ jobsWaiting: z.number().int(), jobsRunning: z.number().int(), tasksWaiting: z.number().int(), tasksRunning: z.number().int() }),
});
export type WorkersResponse = z.infer<typeof workersResponse>;


