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
  /** The current attempt's lease (null while queued or finished): writes of that attempt must name it. */
  leaseToken: string | null;
  /** The workers that computed the job's tasks, recorded with its results. */
  servedBy: { workerId: string; host: string }[] | null;
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
  lease_token: string | null;
  served_by: unknown;
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
  leaseToken: r.lease_token,
  servedBy: parseJson<{ workerId: string; host: string }[]>(r.served_by),
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
    /** The team's evaluate jobs without a run (batches and single codebooks' evaluations), newest first. */
    async listTeamEvaluations(teamId: number, limit: number): Promise<JobRecord[]> {
      const rows = (await db('jobs').where({ team_id: teamId, kind: 'evaluate' }).whereNull('run_id').orderBy('id', 'desc').limit(limit)) as JobRow[];
      return rows.map(toJob);
    },
    /** A codebook's jobs of one kind, newest first, at most `limit`. */
    async listForCodebook(codebookId: number, kind: JobKind, limit: number): Promise<JobRecord[]> {
      const rows = (await db('jobs').where({ codebook_id: codebookId, kind }).orderBy('id', 'desc').limit(limit)) as JobRow[];
      return rows.map(toJob);
    },
    async listForRuns(runIds: number[]): Promise<JobRecord[]> {
      if (runIds.length === 0) return [];
      return ((await db('jobs').whereIn('run_id', runIds).orderBy('id')) as JobRow[]).map(toJob);
    },
    /**
     * Starts an attempt under a new lease: running, the lease written, the interruption count given. Call it on a
     * row locked in the surrounding transaction.
     */
    async startAttempt(id: number, lease: string, attempts: number): Promise<JobRecord> {
      await db('jobs').where({ id }).update({
        state: 'running',
        lease_token: lease,
        attempts,
        started_at: now(db),
        heartbeat_at: now(db),
        finished_at: null,
        error: null,
        progress: null,
      });
      return toJob((await db('jobs').where({ id }).first()) as JobRow);
    },
    /** Writes progress only while the attempt holding `lease` still owns the job. */
    async setProgress(id: number, lease: string, progress: JobProgress): Promise<void> {
      await db('jobs').where({ id, state: 'running', lease_token: lease }).update({ progress: JSON.stringify(progress), heartbeat_at: now(db) });
    },
    /**
     * Touches the heartbeat of the attempts given; returns the ids someone asked to cancel and those whose lease is
     * gone (the job finished or was taken by another attempt), so their holder stops.
     */
    async heartbeat(leases: { id: number; lease: string }[]): Promise<{ cancel: number[]; lost: number[] }> {
      if (leases.length === 0) return { cancel: [], lost: [] };
      const ids = leases.map((l) => l.id);
      const rows = (await db('jobs').whereIn('id', ids).select('id', 'state', 'lease_token', 'cancel_requested')) as Pick<JobRow, 'id' | 'state' | 'lease_token' | 'cancel_requested'>[];
      const byId = new Map(rows.map((r) => [r.id, r]));
      const held = leases.filter((l) => byId.get(l.id)?.state === 'running' && byId.get(l.id)?.lease_token === l.lease);
      for (const l of held) await db('jobs').where({ id: l.id, lease_token: l.lease }).update({ heartbeat_at: now(db) });
      return {
        cancel: held.filter((l) => Boolean(byId.get(l.id)!.cancel_requested)).map((l) => l.id),
        lost: leases.filter((l) => !held.includes(l)).map((l) => l.id),
      };
    },
    /**
     * Moves a running job to a terminal state; false when it was no longer running (already finished elsewhere) or,
     * with a lease, when another attempt holds it now.
     */
    async finish(id: number, state: 'succeeded' | 'failed' | 'cancelled', error: string | null = null, lease?: string): Promise<boolean> {
      const where: Record<string, unknown> = { id, state: 'running' };
      if (lease !== undefined) where.lease_token = lease;
      // The lease stays on the finished row: a commit retried after a lost acknowledgement recognises its own work.
      const changed = await db('jobs').where(where).update({ state, error, finished_at: now(db), heartbeat_at: now(db) });
      return Number(changed) > 0;
    },
    /** A queued job is cancelled at once; a running one is flagged for its runner to abort. */
    async cancel(id: number): Promise<'cancelled' | 'requested' | 'finished'> {
      const job = (await db('jobs').where({ id }).forUpdate().first()) as JobRow | undefined;
      if (!job) return 'finished';
      if (job.state === 'queued') {
        await db('jobs').where({ id }).update({ state: 'cancelled', cancel_requested: true, lease_token: null, finished_at: now(db) });
        return 'cancelled';
      }
      if (job.state === 'running') {
        await db('jobs').where({ id }).update({ cancel_requested: true });
        return 'requested';
      }
      return 'finished';
    },
    async recordServedBy(id: number, servedBy: { workerId: string; host: string }[]): Promise<void> {
      await db('jobs').where({ id }).update({ served_by: JSON.stringify(servedBy) });
    },
    /** Ids of the jobs still to be done (queued, or running somewhere), oldest first: what the dispatcher must hold. */
    async pendingIds(): Promise<number[]> {
      const rows = (await db('jobs').whereIn('state', ['queued', 'running']).orderBy('id').select('id')) as { id: number }[];
      return rows.map((r) => r.id);
    },
    /** Puts a job back in the queue to run again from the start with the interruptions counted so far. */
    async requeue(id: number, attempts: number): Promise<void> {
      await db('jobs')
        .where({ id })
        .update({ state: 'queued', attempts, lease_token: null, started_at: null, heartbeat_at: null, progress: null });
    },
    async failInterrupted(id: number, attempts: number, reason: string): Promise<void> {
      await db('jobs').where({ id }).update({ state: 'failed', attempts, error: reason, lease_token: null, finished_at: now(db) });
    },
  };
}

export type JobsRepository = ReturnType<typeof jobsRepository>;
