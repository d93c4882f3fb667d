import type { Image, ImageRole } from '../../contracts';
import { iso } from '../rows';
import { insertedId, type Executor } from './executor';

interface ImageRow {
  id: number;
  team_id: number;
  set_id: number;
  file_name: string;
  sha256: string;
  width: number;
  height: number;
  channels: number;
  format: Image['format'];
  bytes: number | string;
  role: ImageRole;
  created_at: Date;
}

export interface NewImage {
  teamId: number;
  setId: number;
  fileName: string;
  sha256: string;
  width: number;
  height: number;
  channels: number;
  format: Image['format'];
  bytes: number;
  role?: ImageRole;
}

const toImage = (r: ImageRow): Image => ({
  id: r.id,
  setId: r.set_id,
  fileName: r.file_name,
  sha256: r.sha256,
  width: r.width,
  height: r.height,
  channels: r.channels,
  format: r.format,
  bytes: Number(r.bytes),
  role: r.role,
  createdAt: iso(r.created_at),
});

// Large id lists go to MariaDB in slices, well under its placeholder limit.
const slice = 1000;
function chunks<T>(items: T[]): T[][] {
  const out: T[][] = [];
  for (let i = 0; i < items.length; i += slice) out.push(items.slice(i, i + slice));
  return out;
}

export function imagesRepository(db: Executor) {
  return {
    async insert(image: NewImage): Promise<number> {
      return insertedId(
        await db('images').insert({
          team_id: image.teamId,
          set_id: image.setId,
          file_name: image.fileName,
          sha256: image.sha256,
          width: image.width,
          height: image.height,
          channels: image.channels,
          format: image.format,
          bytes: image.bytes,
          role: image.role ?? 'training',
        }),
      );
    },
    async find(teamId: number, imageId: number): Promise<Image | null> {
      const row = await db<ImageRow>('images').where({ id: imageId, team_id: teamId }).first();
      return row ? toImage(row) : null;
    },
    async findMany(teamId: number, imageIds: number[]): Promise<Image[]> {
      const out: Image[] = [];
      for (const ids of chunks(imageIds)) {
        const rows = await db<ImageRow>('images').where({ team_id: teamId }).whereIn('id', ids);
        out.push(...rows.map(toImage));
      }
      return out.sort((a, b) => a.id - b.id);
    },
    async listBySet(teamId: number, setId: number, role?: ImageRole): Promise<Image[]> {
      const q = db<ImageRow>('images').where({ team_id: teamId, set_id: setId });
      if (role) q.andWhere({ role });
      return (await q.orderBy('id')).map(toImage);
    },
    /** Ids of the images of a set that already have one of these hashes, by hash. */
    async idsBySha(setId: number, sha256s: string[]): Promise<Map<string, number>> {
      const found = new Map<string, number>();
      for (const shas of chunks(sha256s)) {
        const rows = (await db('images').where({ set_id: setId }).whereIn('sha256', shas).select('id', 'sha256')) as {
          id: number;
          sha256: string;
        }[];
        for (const r of rows) found.set(r.sha256, r.id);
      }
      return found;
    },
    async setRole(teamId: number, imageIds: number[], role: ImageRole): Promise<void> {
      for (const ids of chunks(imageIds)) {
        await db('images').where({ team_id: teamId }).whereIn('id', ids).update({ role });
      }
    },
    async remove(teamId: number, imageId: number): Promise<boolean> {
      return (await db('images').where({ id: imageId, team_id: teamId }).delete()) > 0;
    },
    /** Which of these hashes an image row of any team still points at. */
    async referencedShas(sha256s: string[]): Promise<Set<string>> {
      const found = new Set<string>();
      for (const shas of chunks(sha256s)) {
        const rows = (await db('images').whereIn('sha256', shas).distinct('sha256')) as { sha256: string }[];
        for (const r of rows) found.add(r.sha256);
      }
      return found;
    },
    /** How many image rows, in any team, still point at this stored object. */
    async countBySha(sha256: string): Promise<number> {
      const row = (await db('images').where({ sha256 }).count({ n: '*' }).first()) as { n: number | string } | undefined;
      return Number(row?.n ?? 0);
    },
    /**
     * The runs that use any of these images (run_images, from the runs migration), to say which in a 409.
     * Called only after MariaDB refused a delete for a reference, so the table exists.
     */
    async runsUsing(imageIds: number[]): Promise<{ id: number; name: string }[]> {
      const out = new Map<number, string>();
      for (const ids of chunks(imageIds)) {
        const rows = (await db('run_images as ri')
          .join('runs as r', 'r.id', 'ri.run_id')
          .whereIn('ri.image_id', ids)
          .distinct('r.id', 'r.name')
          .orderBy('r.id')) as { id: number; name: string }[];
        for (const r of rows) out.set(r.id, r.name);
      }
      return [...out].map(([id, name]) => ({ id, name }));
    },
  };
}

export type ImagesRepository = ReturnType<typeof imagesRepository>;
