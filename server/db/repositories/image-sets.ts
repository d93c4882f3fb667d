import type { ImageSet } from '../../contracts';
import { iso } from '../rows';
import { insertedId, type Executor } from './executor';

interface ImageSetRow {
  id: number;
  team_id: number;
  name: string;
  description: string | null;
  created_by: number | null;
  created_at: Date;
  updated_at: Date;
  total: number | string | null;
  training: number | string | null;
  held_out: number | string | null;
}

const toImageSet = (r: ImageSetRow): ImageSet => ({
  id: r.id,
  name: r.name,
  description: r.description,
  createdBy: r.created_by,
  createdAt: iso(r.created_at),
  updatedAt: iso(r.updated_at),
  // SUM over no rows is NULL, and DECIMAL sums may arrive as strings.
  counts: { total: Number(r.total ?? 0), training: Number(r.training ?? 0), heldOut: Number(r.held_out ?? 0) },
});

export function imageSetsRepository(db: Executor) {
  /** Sets with their image counts by role, one grouped join rather than a query per set. */
  const withCounts = (teamId: number) =>
    db('image_sets as s')
      .leftJoin('images as i', 'i.set_id', 's.id')
      .where('s.team_id', teamId)
      .groupBy('s.id')
      .select(
        's.id',
        's.team_id',
        's.name',
        's.description',
        's.created_by',
        's.created_at',
        's.updated_at',
        db.raw('COUNT(i.id) AS total'),
        db.raw("SUM(i.role = 'training') AS training"),
        db.raw("SUM(i.role = 'held-out') AS held_out"),
      );

  return {
    async create(input: { teamId: number; name: string; description: string | null; createdBy: number }): Promise<number> {
      return insertedId(
        await db('image_sets').insert({
          team_id: input.teamId,
          name: input.name,
          description: input.description,
          created_by: input.createdBy,
        }),
      );
    },
    async find(teamId: number, setId: number): Promise<ImageSet | null> {
      const row = (await withCounts(teamId).andWhere('s.id', setId).first()) as ImageSetRow | undefined;
      return row ? toImageSet(row) : null;
    },
    async list(teamId: number): Promise<ImageSet[]> {
      const rows = (await withCounts(teamId).orderBy('s.name').orderBy('s.id')) as ImageSetRow[];
      return rows.map(toImageSet);
    },
    /** Locks the set's row until the transaction ends, serialising uploads, splits and deletes of one set. */
    async lock(teamId: number, setId: number): Promise<boolean> {
      const row = await db('image_sets').where({ id: setId, team_id: teamId }).forUpdate().first('id');
      return row !== undefined;
    },
    async update(teamId: number, setId: number, changes: { name?: string; description?: string | null }): Promise<void> {
      const patch: Record<string, unknown> = { updated_at: db.raw('CURRENT_TIMESTAMP(3)') };
      if (changes.name !== undefined) patch.name = changes.name;
      if (changes.description !== undefined) patch.description = changes.description;
      await db('image_sets').where({ id: setId, team_id: teamId }).update(patch);
    },
    async touch(teamId: number, setId: number): Promise<void> {
      await db('image_sets').where({ id: setId, team_id: teamId }).update({ updated_at: db.raw('CURRENT_TIMESTAMP(3)') });
    },
    async remove(teamId: number, setId: number): Promise<boolean> {
      return (await db('image_sets').where({ id: setId, team_id: teamId }).delete()) > 0;
    },
  };
}

export type ImageSetsRepository = ReturnType<typeof imageSetsRepository>;
