import { randomBytes } from 'node:crypto';
import type { Logger } from '../config';
import type { Database, Repositories } from '../db';
import { refreshRunState } from '../services/run-state';
import { untilDatabaseAnswers } from './database-retry';
import { JobCancelledError, LeaseLostError, MAX_ATTEMPTS, type JobStore, type Taken, type Transition } from './queue';

/** 128 random bits in hex: the lease of one attempt. */
const newLease = () => randomBytes(16).toString('hex');

/** The jobs' rows in MariaDB, written under leases (see JobStore). */
export function createJobStore(db: Database, options: { logger: Logger; signal?: AbortSignal }): JobStore {
  const retry = <T>(what: string, write: () => Promise<T>) => untilDatabaseAnswers(what, write, options);

  function transition(jobId: number, lease: string, state: 'succeeded' | 'failed' | 'cancelled', error: string | null): Promise<Transition> {
    return retry(`finish job ${jobId}`, () =>
      db.transaction(async (tx) => {
        const changed = await tx.jobs.finish(jobId, state, error, lease);
        const job = await tx.jobs.findById(jobId);
        const runState = job?.runId ? await refreshRunState(tx, job.runId) : null;
        return { changed, state: job?.state ?? state, runState };
      }),
    );
  }

  return {
    async take(jobId): Promise<Taken> {
      return retry(`take job ${jobId}`, () => db.transaction(async (tx): Promise<Taken> => {
        const job = await tx.jobs.lock(jobId);
        if (!job || (job.state !== 'queued' && job.state !== 'running')) return { kind: 'none' };
        // Still running: the attempt that held it stopped or lost it, so this is an interruption.
        const attempts = job.state === 'running' ? job.attempts + 1 : job.attempts;
        let ended: { state: 'failed' | 'cancelled'; error: string | null } | null = null;
        if (job.cancelRequested) {
          ended = { state: 'cancelled', error: null };
          await tx.jobs.finish(jobId, 'cancelled');
        } else if (attempts >= MAX_ATTEMPTS) {
          ended = { state: 'failed', error: `interrupted ${attempts} times (its worker or server stopped while it ran); not retried again` };
          await tx.jobs.failInterrupted(jobId, attempts, ended.error!);
        }
        if (ended) {
          const runState = job.runId ? await refreshRunState(tx, job.runId) : null;
          const after = (await tx.jobs.findById(jobId))!;
          return { kind: 'ended', job: after, transition: { changed: true, state: ended.state, runState }, error: ended.error };
        }
        const lease = newLease();
        const started = await tx.jobs.startAttempt(jobId, lease, attempts);
        if (job.runId) await refreshRunState(tx, job.runId);
        return { kind: 'taken', job: started, lease };
      }));
    },
    async progress(jobId, lease, progress) {
      await db.repos.jobs.setProgress(jobId, lease, progress);
    },
    async heartbeat(leases) {
      return db.repos.jobs.heartbeat(leases);
    },
    complete: (jobId, lease) => transition(jobId, lease, 'succeeded', null),
    async completeWith(jobId: number, lease: string, work: (tx: Repositories) => Promise<void>): Promise<void> {
      await retry(`commit job ${jobId}`, () =>
        db.transaction(async (tx) => {
          // The lock orders this commit against a concurrent cancel: whichever comes second sees the other's result.
          const job = await tx.jobs.lock(jobId);
          // An earlier try committed but its acknowledgement was lost with the connection: done already.
          if (job?.state === 'succeeded' && job.leaseToken === lease) return;
          if (!job || job.state !== 'running' || job.leaseToken !== lease) throw new LeaseLostError(jobId);
          if (job.cancelRequested) throw new JobCancelledError(jobId);
          await work(tx);
          await tx.jobs.finish(jobId, 'succeeded', null, lease);
          if (job.runId) await refreshRunState(tx, job.runId);
        }),
      );
    },
    fail: (jobId, lease, reason) => transition(jobId, lease, 'failed', reason.slice(0, 60_000)),
    cancelled: (jobId, lease) => transition(jobId, lease, 'cancelled', null),
    async release(jobId, lease) {
      await retry(`release job ${jobId}`, () =>
        db.transaction(async (tx) => {
          const job = await tx.jobs.lock(jobId);
          if (!job || job.state !== 'running' || job.leaseToken !== lease) return;
          await tx.jobs.requeue(jobId, job.attempts);
          if (job.runId) await refreshRunState(tx, job.runId);
        }),
      );
    },
    async requestCancel(jobId) {
      return db.transaction(async (tx) => {
        const outcome = await tx.jobs.cancel(jobId);
        const job = await tx.jobs.findById(jobId);
        if (job?.runId) await refreshRunState(tx, job.runId);
        return outcome;
      });
    },
    pendingIds: () => db.repos.jobs.pendingIds(),
  };
}
