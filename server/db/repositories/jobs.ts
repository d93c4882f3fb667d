import type { JobKind, JobProgress, JobState } from '../../contracts';
import { iso, isoOrNull, parseJson } from '../rows';
import { insertedId, type Executor } from './executor';

export interface JobRecord {
  id: number;
  teamId: number;
  runId: number | null;
  codebookId: number | null;
  kind: JobKind;
  state: JobState;
  payload: Record<string, unknown> | null;
  progress: JobProgress | null;
  error: string | null;
  attempts: number;
  cancelRequested: boolean;
  createdBy: number | null;
  createdAt: string;
  startedAt: string | null;
  finishedAt: string | null;
  heartbeatAt: string | null;
}

export interface NewJob {
  teamId: number;
  runId?: number | null;
  codebookId?: number | null;
  kind: JobKind;
  payload?: Record<string, unknown> | null;
  createdBy: number | null;
}

interface JobRow {
  id: number;
  team_id: number;
  run_id: number | null;
  codebook_id: number | null;
  kind: JobKind;
  state: JobState;
  payload: unknown;
  progress: unknown;
  error: string | null;
  attempts: number;
  cancel_requested: number | boolean;
  created_by: number | null;
  created_at: Date;
  started_at: Date | null;
  finished_at: Date | null;
  heartbeat_at: Date | null;
}

const toJob = (r: JobRow): JobRecord => ({
  id: r.id,
  teamId: r.team_id,
  runId: r.run_id,
  codebookId: r.codebook_id,
  kind: r.kind,
  state: r.state,
  payload: parseJson<Record<string, unknown>>(r.payload),
  progress: parseJson<JobProgress>(r.progress),
  error: r.error,
  attempts: r.attempts,
  cancelRequested: Boolean(r.cancel_requested),
  createdBy: r.created_by,
  createdAt: iso(r.created_at),
  startedAt: isoOrNull(r.started_at),
  finishedAt: isoOrNull(r.finished_at),
  heartbeatAt: isoOrNull(r.heartbeat_at),
});

const now = (db: Executor) => db.raw('CURRENT_TIMESTAMP(3)');

export function jobsRepository(db: Executor) {
  return {
    async insert(job: NewJob): Promise<number> {
      return insertedId(
        await db('jobs').insert({
          team_id: job.teamId,
          run_id: job.runId ?? null,
          codebook_id: job.codebookId ?? null,
          kind: job.kind,
          payload: job.payload ? JSON.stringify(job.payload) : null,
          created_by: job.createdBy,
        }),
      );
    },
    async findById(id: number): Promise<JobRecord | null> {
      const row = (await db('jobs').where({ id }).first()) as JobRow | undefined;
      return row ? toJob(row) : null;
    },
    /** Locks the row until the surrounding transaction ends. */
    async lock(id: number): Promise<JobRecord | null> {
      const row = (await db('jobs').where({ id }).forUpdate().first()) as JobRow | undefined;
      return row ? toJob(row) : null;
    },
    async listForRun(runId: number, options: { forUpdate?: boolean } = {}): Promise<JobRecord[]> {
      const q = db('jobs').where({ run_id: runId }).orderBy('id');
      if (options.forUpdate) q.forUpdate();
      return ((await q) as JobRow[]).map(toJob);
    },
    async listForRuns(runIds: number[]): Promise<JobRecord[]> {
      if (runIds.length === 0) return [];
      return ((await db('jobs').whereIn('run_id', runIds).orderBy('id')) as JobRow[]).map(toJob);
    },
    /**
     * Takes the oldest queued job and marks it running. Must run inside a transaction: SKIP LOCKED lets
     * concurrent claimers (threads or processes) pass over a row another one is taking instead of waiting.
     */
    async claimNext(): Promise<JobRecord | null> {
      const row = (await db('jobs').where({ state: 'queued' }).orderBy('id').limit(1).forUpdate().skipLocked().first()) as
        | JobRow
        | undefined;
      if (!row) return null;
      await db('jobs')
        .where({ id: row.id })
        .update({ state: 'running', started_at: now(db), heartbeat_at: now(db), finished_at: null, error: null, progress: null });
      return toJob((await db('jobs').where({ id: row.id }).first()) as JobRow);
    },
    async setProgress(id: number, progress: JobProgress): Promise<void> {
      await db('jobs').where({ id, state: 'running' }).update({ progress: JSON.stringify(progress), heartbeat_at: now(db) });
    },
    /** Touches the heartbeat of running jobs and reports which of them someone asked to cancel. */
    async heartbeat(ids: number[]): Promise<number[]> {
      if (ids.length === 0) return [];
      await db('jobs').whereIn('id', ids).andWhere({ state: 'running' }).update({ heartbeat_at: now(db) });
      const rows = (await db('jobs').whereIn('id', ids).andWhere({ cancel_requested: true }).select('id')) as { id: number }[];
      return rows.map((r) => r.id);
    },
    /** Moves a running job to a terminal state; false when it was no longer running (already finished elsewhere). */
    async finish(id: number, state: 'succeeded' | 'failed' | 'cancelled', error: string | null = null): Promise<boolean> {
      const changed = await db('jobs').where({ id, state: 'running' }).update({ state, error, finished_at: now(db), heartbeat_at: now(db) });
      return Number(changed) > 0;
    },
    /** A queued job is cancelled at once; a running one is flagged for its runner to abort. */
    async cancel(id: number): Promise<'cancelled' | 'requested' | 'finished'> {
      const job = (await db('jobs').where({ id }).forUpdate().first()) as JobRow | undefined;
      if (!job) return 'finished';
      if (job.state === 'queued') {
        await db('jobs').where({ id }).update({ state: 'cancelled', cancel_requested: true, finished_at: now(db) });
        return 'cancelled';
      }
      if (job.state === 'running') {
        await db('jobs').where({ id }).update({ cancel_requested: true });
        return 'requested';
      }
      return 'finished';
    },
    /** Running jobs, locked: at start-up these are the ones a stopped process left behind. */
    async lockRunning(): Promise<JobRecord[]> {
      return ((await db('jobs').where({ state: 'running' }).orderBy('id').forUpdate()) as JobRow[]).map(toJob);
    },
    /** Puts a job back in the queue to run again from the start, counting the interruption. */
    async requeue(id: number, attempts: number): Promise<void> {
      await db('jobs')
        .where({ id })
        .update({ state: 'queued', attempts, started_at: null, heartbeat_at: null, progress: null });
    },
    async failInterrupted(id: number, attempts: number, reason: string): Promise<void> {
      await db('jobs').where({ id }).update({ state: 'failed', attempts, error: reason, finished_at: now(db) });
    },
  };
}

export type JobsRepository = ReturnType<typeof jobsRepository>;
