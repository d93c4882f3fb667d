import type { JobProgress, JobState } from '../contracts';
import type { JobRecord, NewJob, Repositories } from '../db';

export type Job = JobRecord;
export type { NewJob };

/** A job's transition as the store applied it, with the run's state that follows from it. */
export interface Transition {
  /** False when the attempt no longer held the job (finished, or taken by another attempt): nothing was changed. */
  changed: boolean;
  state: JobState;
  runState: JobState | null;
}

/** What taking a delivered job came to. */
export type Taken =
  /** An attempt starts under `lease`; every write of the attempt names it. */
  | { kind: 'taken'; job: Job; lease: string }
  /** Taking ended the job instead (cancelled while it waited, or interrupted once too often). */
  | { kind: 'ended'; job: Job; transition: Transition; error: string | null }
  /** Nothing to do: the job is gone or already finished (a redelivery). */
  | { kind: 'none' };

/**
 * The jobs' system of record: the `jobs` rows in MariaDB. The dispatcher (BullMQ, dispatch.ts) only says which job
 * to take next; every state change happens here, and every write of an attempt names the attempt's lease, so a
 * process that lost a job (a redelivery elsewhere, a Redis that forgot) can neither report on it nor finish it.
 */
export interface JobStore {
  /**
   * Starts an attempt at a delivered job: a queued job starts as it is; a job still marked running was interrupted
   * (its holder stopped or lost it) and starts again from the start with the interruption counted, or fails once
   * it was interrupted MAX_ATTEMPTS times; a finished job is left alone.
   */
  take(jobId: number): Promise<Taken>;
  progress(jobId: number, lease: string, progress: JobProgress): Promise<void>;
  /** Marks the attempts alive; returns those someone asked to cancel and those whose lease is gone. */
  heartbeat(leases: { id: number; lease: string }[]): Promise<{ cancel: number[]; lost: number[] }>;
  complete(jobId: number, lease: string): Promise<Transition>;
  /**
   * Runs `work` in the transaction that marks the job succeeded, so a job's results and its success commit
   * together or not at all. Throws a JobCancelledError when cancellation was requested meanwhile, and a
   * LeaseLostError when another attempt holds the job now. Retried while the database is unreachable.
   */
  completeWith(jobId: number, lease: string, work: (tx: Repositories) => Promise<void>): Promise<void>;
  fail(jobId: number, lease: string, reason: string): Promise<Transition>;
  cancelled(jobId: number, lease: string): Promise<Transition>;
  /** Puts a running job back in the queue uncounted (the process is stopping, not the job failing). */
  release(jobId: number, lease: string): Promise<void>;
  /** Cancels a queued job at once; flags a running one for its holder. */
  requestCancel(jobId: number): Promise<'cancelled' | 'requested' | 'finished'>;
  /** Ids of the jobs queued or running, oldest first: what the dispatcher must hold. */
  pendingIds(): Promise<number[]>;
}

/** How many interruptions a job survives before it is failed instead of run again. */
export const MAX_ATTEMPTS = 3;

export class JobCancelledError extends Error {
  override readonly name = 'JobCancelledError';
  constructor(jobId: number) {
    super(`job ${jobId} was cancelled`);
  }
}

/** The attempt no longer holds its job: another attempt took it, or it was finished meanwhile. */
export class LeaseLostError extends Error {
  override readonly name = 'LeaseLostError';
  constructor(jobId: number) {
    super(`job ${jobId} is held by another attempt now`);
  }
}
