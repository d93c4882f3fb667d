import type { Logger } from '../config';
import type { JobInput, JobKind, JobProgress } from '../contracts';
import type { Database, Repositories } from '../db';
import type { TrainingLimits } from '../services/training-memory';
import type { ContentStore } from '../storage/content-store';
import type { JobEventBus } from './events';
import type { ComputeClient } from './compute/client';
import type { Job } from './queue';

/** What a handler may use: built once by the composition and shared by every job. */
export interface JobDeps {
  db: Database;
  store: ContentStore;
  /** Hands compute tasks (training, measuring, reference codecs) to the workers; built once. */
  compute: ComputeClient;
  bus: JobEventBus;
  logger: Logger;
  /** TRAINING_MAX_BYTES and the engine's threads: a training job checks its run against them again before it starts. */
  training: TrainingLimits;
}

export interface JobContext<K extends JobKind = JobKind> {
  /** The job's run, codebook and payload, checked against its kind's schema (contracts/job-inputs.ts) when it was taken. */
  input: JobInput<K>;
  /** Aborted on cancellation and on shutdown; pass it to every engine and pool call. */
  signal: AbortSignal;
  /** Report as often as you like: every report reaches the event bus, the database gets at most two a second. */
  progress(progress: JobProgress): void;
  /**
   * Writes the job's results in the transaction that marks it succeeded (under this attempt's lease), so results
   * and success commit together or not at all; a job queued inside it is dispatched after the commit.
   */
  complete(work: (tx: Repositories) => Promise<void>): Promise<void>;
  deps: JobDeps;
}

/**
 * Does one job's work. Resolving means success (the runner marks it succeeded, unless the handler already did
 * through ctx.complete); throwing means failure, with the error's message as the reason the user sees.
 */
export type JobHandler<K extends JobKind = JobKind> = (job: Job, ctx: JobContext<K>) => Promise<void>;

export type JobHandlers = { [K in JobKind]: JobHandler<K> };
