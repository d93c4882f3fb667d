import type { Database, Repositories } from '../db';
import { JobCancelledError, MAX_ATTEMPTS, type Job, type JobQueue, type NewJob, type Transition } from './queue';
import { refreshRunState } from '../services/run-state';

/** The job queue in MariaDB: rows of `jobs`, claimed with SELECT … FOR UPDATE SKIP LOCKED. */
export function createMariaDbQueue(db: Database): JobQueue {
  async function transition(jobId: number, state: 'succeeded' | 'failed' | 'cancelled', error: string | null): Promise<Transition> {
    return db.transaction(async (tx) => {
      const changed = await tx.jobs.finish(jobId, state, error);
      const job = await tx.jobs.findById(jobId);
      const runState = job?.runId ? await refreshRunState(tx, job.runId) : null;
      return { changed, state: job?.state ?? state, runState };
    });
  }

  return {
    async enqueue(job: NewJob) {
      return db.repos.jobs.insert(job);
    },
    async claim(): Promise<Job | null> {
      return db.transaction(async (tx) => {
        const job = await tx.jobs.claimNext();
        if (job?.runId) await refreshRunState(tx, job.runId);
        return job;
      });
    },
    async progress(jobId, progress) {
      await db.repos.jobs.setProgress(jobId, progress);
    },
    async heartbeat(jobIds) {
      return db.repos.jobs.heartbeat(jobIds);
    },
    complete: (jobId) => transition(jobId, 'succeeded', null),
    async completeWith<T>(jobId: number, work: (tx: Repositories) => Promise<T>): Promise<T> {
      return db.transaction(async (tx) => {
        // The lock orders this commit against a concurrent cancel: whichever comes second sees the other's result.
        const job = await tx.jobs.lock(jobId);
        if (!job || job.state !== 'running' || job.cancelRequested) throw new JobCancelledError(jobId);
        const result = await work(tx);
        await tx.jobs.finish(jobId, 'succeeded');
        if (job.runId) await refreshRunState(tx, job.runId);
        return result;
      });
    },
    fail: (jobId, reason) => transition(jobId, 'failed', reason.slice(0, 60_000)),
    cancelled: (jobId) => transition(jobId, 'cancelled', null),
    async release(jobId) {
      await db.transaction(async (tx) => {
        const job = await tx.jobs.lock(jobId);
        if (!job || job.state !== 'running') return;
        await tx.jobs.requeue(jobId, job.attempts);
        if (job.runId) await refreshRunState(tx, job.runId);
      });
    },
    async requestCancel(jobId) {
      return db.transaction(async (tx) => {
        const outcome = await tx.jobs.cancel(jobId);
        const job = await tx.jobs.findById(jobId);
        if (job?.runId) await refreshRunState(tx, job.runId);
        return outcome;
      });
    },
    async recoverInterrupted() {
      return db.transaction(async (tx) => {
        const requeued: number[] = [];
        const failed: number[] = [];
        const runs = new Set<number>();
        // One server process owns the queue and calls this before it claims anything, so every job still marked
        // running was left by a process that stopped. Several processes sharing the queue would instead need a
        // heartbeat_at age test here.
        for (const job of await tx.jobs.lockRunning()) {
          const attempts = job.attempts + 1;
          if (job.cancelRequested) {
            await tx.jobs.finish(job.id, 'cancelled');
          } else if (attempts >= MAX_ATTEMPTS) {
            await tx.jobs.failInterrupted(job.id, attempts, `interrupted ${attempts} times (server stopped while it ran); not retried again`);
            failed.push(job.id);
          } else {
            await tx.jobs.requeue(job.id, attempts);
            requeued.push(job.id);
          }
          if (job.runId) runs.add(job.runId);
        }
        for (const runId of runs) await refreshRunState(tx, runId);
        return { requeued, failed };
      });
    },
  };
}
