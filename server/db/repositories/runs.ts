import type { CreateRunBody, JobState, NormalizedRunConfig } from '../../contracts';
import { iso, isoOrNull, parseJson } from '../rows';
import { insertedId, type Executor } from './executor';

export interface RunRecord {
  id: number;
  teamId: number;
  name: string;
  notes: string | null;
  submitted: CreateRunBody;
  normalized: NormalizedRunConfig;
  createdBy: { id: number; name: string; email: string } | null;
  createdAt: string;
  state: JobState;
  error: string | null;
  heldOutHash: string;
  finishedAt: string | null;
}

/** An image as a run sees it: where its bytes are and how large it is. */
export interface RunImageRecord {
  id: number;
  setId: number;
  sha256: string;
  fileName: string;
  width: number;
  height: number;
  role: 'training' | 'held-out';
}

interface RunRow {
  id: number;
  team_id: number;
  name: string;
  notes: string | null;
  config: unknown;
  created_by: number | null;
  creator_name: string | null;
  creator_email: string | null;
  created_at: Date;
  state: JobState;
  error: string | null;
  held_out_hash: string;
  finished_at: Date | null;
}

const toRun = (r: RunRow): RunRecord => {
  const config = parseJson<{ submitted: CreateRunBody; normalized: NormalizedRunConfig }>(r.config)!;
  return {
    id: r.id,
    teamId: r.team_id,
    name: r.name,
    notes: r.notes,
    submitted: config.submitted,
    normalized: config.normalized,
    createdBy: r.created_by === null ? null : { id: r.created_by, name: r.creator_name ?? '', email: r.creator_email ?? '' },
    createdAt: iso(r.created_at),
    state: r.state,
    error: r.error,
    heldOutHash: r.held_out_hash,
    finishedAt: isoOrNull(r.finished_at),
  };
};

const imageColumns = ['i.id', 'i.set_id', 'i.sha256', 'i.file_name', 'i.width', 'i.height', 'i.role'];
interface ImageRow {
  id: number;
  set_id: number;
  sha256: string;
  file_name: string;
  width: number;
  height: number;
  role: 'training' | 'held-out';
}
const toImage = (r: ImageRow): RunImageRecord => ({
  id: r.id,
  setId: r.set_id,
  sha256: r.sha256,
  fileName: r.file_name,
  width: r.width,
  height: r.height,
  role: r.role,
});

export function runsRepository(db: Executor) {
  const base = () =>
    db('runs as r')
      .leftJoin('users as u', 'u.id', 'r.created_by')
      .select('r.*', 'u.name as creator_name', 'u.email as creator_email');

  return {
    async insert(input: {
      teamId: number;
      name: string;
      notes: string | null;
      submitted: CreateRunBody;
      normalized: NormalizedRunConfig;
      createdBy: number;
      heldOutHash: string;
    }): Promise<number> {
      return insertedId(
        await db('runs').insert({
          team_id: input.teamId,
          name: input.name,
          notes: input.notes,
          config: JSON.stringify({ submitted: input.submitted, normalized: input.normalized }),
          created_by: input.createdBy,
          held_out_hash: input.heldOutHash,
        }),
      );
    },
    async insertImages(runId: number, images: { imageId: number; role: 'training' | 'held-out' }[]): Promise<void> {
      // Chunked: a run may name thousands of images and one INSERT has a placeholder limit.
      for (let i = 0; i < images.length; i += 1000) {
        await db('run_images').insert(images.slice(i, i + 1000).map((x) => ({ run_id: runId, image_id: x.imageId, role: x.role })));
      }
    },
    async findForTeam(teamId: number, runId: number): Promise<RunRecord | null> {
      const row = (await base().where({ 'r.id': runId, 'r.team_id': teamId }).first()) as RunRow | undefined;
      return row ? toRun(row) : null;
    },
    /** For job handlers, which act on an id they were given, not on a caller's team. */
    async findById(runId: number): Promise<RunRecord | null> {
      const row = (await base().where({ 'r.id': runId }).first()) as RunRow | undefined;
      return row ? toRun(row) : null;
    },
    async listForTeam(teamId: number, limit = 500): Promise<RunRecord[]> {
      const rows = (await base().where({ 'r.team_id': teamId }).orderBy('r.id', 'desc').limit(limit)) as RunRow[];
      return rows.map(toRun);
    },
    async rename(runId: number, name: string): Promise<void> {
      await db('runs').where({ id: runId }).update({ name });
    },
    /**
     * Locks the unfinished jobs that work on the run: its own (train, evaluate) and those on its codebooks (a
     * later evaluation), so none is claimed while the run is being deleted.
     */
    async lockOpenJobs(runId: number): Promise<{ id: number; state: JobState }[]> {
      return (await db('jobs')
        .where((q) => q.where({ run_id: runId }).orWhereIn('codebook_id', db('codebooks').where({ run_id: runId }).select('id')))
        .whereIn('state', ['queued', 'running'])
        .forUpdate()
        .select('id', 'state')) as { id: number; state: JobState }[];
    },
    /**
     * Deletes the run. The foreign keys take the rest with it (ON DELETE CASCADE): its image list, its jobs, its
     * trained codebooks and, through them, their evaluations, reconstructions and jobs. An imported codebook has no
     * run and stays. The images and their stored bytes are not the run's; reconstruction views no row names any
     * more are freed by the store sweep.
     */
    async remove(runId: number): Promise<void> {
      await db('runs').where({ id: runId }).delete();
    },
    /** The run's images with the role they play in it, training first, each in id order. */
    async imagesOf(runId: number, role?: 'training' | 'held-out'): Promise<RunImageRecord[]> {
      const q = db('run_images as ri')
        .join('images as i', 'i.id', 'ri.image_id')
        .where('ri.run_id', runId)
        .orderBy([{ column: 'ri.role', order: 'asc' }, { column: 'i.id' }]) // ENUM order: training first
        .select([...imageColumns.filter((c) => c !== 'i.role'), 'ri.role']);
      if (role) q.andWhere('ri.role', role);
      return ((await q) as ImageRow[]).map(toImage);
    },
    /** Images of the team among `ids`; ids of other teams are simply absent. */
    async teamImages(teamId: number, ids: number[]): Promise<RunImageRecord[]> {
      if (ids.length === 0) return [];
      const rows = (await db('images as i').where('i.team_id', teamId).whereIn('i.id', ids).orderBy('i.id').select(imageColumns)) as ImageRow[];
      return rows.map(toImage);
    },
    /** Every image of one of the team's sets, or null when the team has no such set. */
    async setImages(teamId: number, setId: number): Promise<RunImageRecord[] | null> {
      const set = await db('image_sets').where({ id: setId, team_id: teamId }).first('id');
      if (!set) return null;
      const rows = (await db('images as i').where({ 'i.set_id': setId, 'i.team_id': teamId }).orderBy('i.id').select(imageColumns)) as ImageRow[];
      return rows.map(toImage);
    },
    /** The run's jobs in id order, as its state rule (services/run-state.ts) reads them. */
    async jobStates(runId: number): Promise<{ state: JobState; kind: string; error: string | null }[]> {
      return (await db('jobs').where({ run_id: runId }).select('state', 'kind', 'error').orderBy('id')) as { state: JobState; kind: string; error: string | null }[];
    },
    /** Writes the state the run's jobs determine; the finish time is kept from the first time the run ended. */
    async writeState(runId: number, update: { state: JobState; error: string | null; finished: boolean }): Promise<void> {
      await db('runs')
        .where({ id: runId })
        .update({ state: update.state, error: update.error, finished_at: update.finished ? db.raw('COALESCE(finished_at, CURRENT_TIMESTAMP(3))') : null });
    },
    /**
     * The highest-PSNR point each run reached on its own held-out list (an exact reconstruction, psnr NULL, ranks
     * first; ties go to the lower rate). Runs without an evaluation are absent.
     */
    async bestPoints(runIds: number[]): Promise<Map<number, { codebookId: number; bits: number; bpp: number; psnr: number | null; mse: number }>> {
      const out = new Map<number, { codebookId: number; bits: number; bpp: number; psnr: number | null; mse: number }>();
      if (runIds.length === 0) return out;
      const rows = (await db('codebooks as c')
        .join('runs as r', 'r.id', 'c.run_id')
        .join('evaluations as e', function () {
          this.on('e.codebook_id', '=', 'c.id').andOn('e.held_out_hash', '=', 'r.held_out_hash');
        })
        .whereIn('c.run_id', runIds)
        .select('c.run_id', 'c.id', 'c.bits', 'e.overall')) as { run_id: number; id: number; bits: number; overall: unknown }[];
      for (const row of rows) {
        const o = parseJson<{ psnr: number | null; mse: number; bppActual: number }>(row.overall);
        if (!o) continue;
        const point = { codebookId: row.id, bits: row.bits, bpp: o.bppActual, psnr: o.psnr, mse: o.mse };
        const best = out.get(row.run_id);
        const rank = (p: { psnr: number | null }) => (p.psnr === null ? Infinity : p.psnr);
        if (!best || rank(point) > rank(best) || (rank(point) === rank(best) && point.bpp < best.bpp)) out.set(row.run_id, point);
      }
      return out;
    },
  };
}

export type RunsRepository = ReturnType<typeof runsRepository>;
