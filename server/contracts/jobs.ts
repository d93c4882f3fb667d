import { z } from 'zod';
import { RUN_STATES } from '../engine/vocabulary';

export const jobStates = RUN_STATES;
export const jobState = z.enum(jobStates);
export type JobState = z.infer<typeof jobState>;
export const terminalJobStates: readonly JobState[] = ['succeeded', 'failed', 'cancelled'];

/** anomaly and denoise: the codebook read as a model of its training patches (contracts/codebook-model.ts). */
export const jobKinds = ['train', 'evaluate', 'anomaly', 'denoise'] as const;
export const jobKind = z.enum(jobKinds);
export type JobKind = z.infer<typeof jobKind>;

/** What a running job last reported; every field but phase is optional because phases report different things. */
export const jobProgress = z.object({
  phase: z.string(),
  /** Codebook size being trained now, and the largest one of this job. */
  size: z.number().int().optional(),
  targetSize: z.number().int().optional(),
  iteration: z.number().int().optional(),
  /** MSE per vector component on the training vectors. */
  distortion: z.number().optional(),
  /** 0..1 over the whole job. */
  fraction: z.number().min(0).max(1),
  message: z.string().optional(),
});
export type JobProgress = z.infer<typeof jobProgress>;

export const job = z.object({
  id: z.number().int(),
  kind: jobKind,
  state: jobState,
  progress: jobProgress.nullable(),
  error: z.string().nullable(),
  attempts: z.number().int(),
  cancelRequested: z.boolean(),
  createdAt: z.string(),
  startedAt: z.string().nullable(),
  finishedAt: z.string().nullable(),
  /** The compute workers that served the job (their id and host), recorded with its results; empty until then. */
  servedBy: z.array(z.object({ workerId: z.string(), host: z.string() })),
});
export type JobSummary = z.infer<typeof job>;

/** Server-sent events of GET /api/teams/:teamId/runs/:runId/events (the first is always `snapshot`). */
export const runEventNames = ['snapshot', 'progress', 'state', 'end'] as const;
export const jobProgressEvent = z.object({ runId: z.number().int(), jobId: z.number().int(), kind: jobKind, progress: jobProgress });
export const jobStateEvent = z.object({
  runId: z.number().int(),
  jobId: z.number().int(),
  kind: jobKind,
  state: jobState,
  error: z.string().nullable(),
  runState: jobState,
});
