import type { JobProgress, JobState } from '../contracts';
import type { JobRecord, NewJob, Repositories } from '../db';

export type Job = JobRecord;
export type { NewJob };

/** A job's transition as the queue applied it, with the run's state that follows from it. */
export interface Transition {
  /** False when the job was no longer running (finished or recovered elsewhere): nothing was changed. */
  changed: boolean;
  state: JobState;
  runState: JobState | null;
}

/**
 * The durable job queue the runner works from. The MariaDB implementation (mariadb-queue.ts) is the only one
 * today; a Redis-backed queue with remote workers could take its place without touching routes or the engine.
 */
export interface JobQueue {
  enqueue(job: NewJob): Promise<number>;
  /** Takes the oldest queued job and marks it running, or null when none waits. */
  claim(): Promise<Job | null>;
  progress(jobId: number, progress: JobProgress): Promise<void>;
  /** Marks the jobs alive; returns those among them someone asked to cancel. */
  heartbeat(jobIds: number[]): Promise<number[]>;
  complete(jobId: number): Promise<Transition>;
  /**
   * Runs `work` in the transaction that marks the job succeeded, so a job's results and its success commit
   * together or not at all. Throws a JobCancelledError instead when cancellation was requested meanwhile.
   */
  completeWith<T>(jobId: number, work: (tx: Repositories) => Promise<T>): Promise<T>;
  fail(jobId: number, reason: string): Promise<Transition>;
  cancelled(jobId: number): Promise<Transition>;
  /** Puts a running job back in the queue untouched (the process is stopping, not the job failing). */
  release(jobId: number): Promise<void>;
  /** Cancels a queued job at once; flags a running one for its runner. */
  requestCancel(jobId: number): Promise<'cancelled' | 'requested' | 'finished'>;
  /**
   * Start-up recovery: jobs left running by a process that stopped are queued again to run from the start,
   * their attempts counted; a job interrupted MAX_ATTEMPTS times fails instead, with the reason.
   */
  recoverInterrupted(): Promise<{ requeued: number[]; failed: number[] }>;
}

/** How many interruptions a job survives before recovery gives up on it. */
export const MAX_ATTEMPTS = 3;

export class JobCancelledError extends Error {
  override readonly name = 'JobCancelledError';
  constructor(jobId: number) {
    super(`job ${jobId} was cancelled`);
  }
}
