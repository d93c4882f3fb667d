import type { Image, ImageRole, ImageSet } from '../contracts';
import type { Database } from '../db';
import { createRng } from '../engine';
import { AppError, badRequest, conflict, isAppError, notFound } from '../errors';
import { recordAudit } from './audit';
import { refuseIfImagesReleased } from './releases';

/**
 * The images chosen to be held out: image ids in ascending order, shuffled by Fisher–Yates (Durstenfeld's
 * in-place form, from the last position down, j uniform in 0..i) driven by the engine's seeded xoshiro128**
 * generator; the first round(fraction · n) ids of the shuffled order are held out. The same seed and the same
 * images always give the same split, on any machine.
 */
export function chooseHeldOut(imageIds: readonly number[], heldOutFraction: number, seed: number): Set<number> {
  const order = [...imageIds].sort((a, b) => a - b);
  const rng = createRng(seed);
  for (let i = order.length - 1; i > 0; i -= 1) {
    const j = rng.nextInt(i + 1);
    [order[i], order[j]] = [order[j], order[i]];
  }
  return new Set(order.slice(0, Math.round(heldOutFraction * order.length)));
}

/** A refused delete names the runs that still use the images, so people know what to delete first. */
export async function inUseConflict(db: Database, err: unknown, imageIds: number[], what: string): Promise<unknown> {
  if (!isAppError(err) || (err.details as { reason?: string } | undefined)?.reason !== 'in_use') return err;
  const runs = await db.repos.images.runsUsing(imageIds);
  const names = runs.map((r) => `"${r.name}" (#${r.id})`).join(', ');
  return conflict(`${what} cannot be deleted: ${runs.length === 1 ? 'image is used by run' : 'images are used by runs'} ${names || 'of this team'}; delete those runs first`, {
    reason: 'in_use',
    runs,
  });
}

function nameTaken(err: unknown, name: string | undefined): unknown {
  if (name !== undefined && isAppError(err) && err.code === 'conflict' && err.details === undefined) {
    return conflict(`The team already has an image set named "${name}"`, { field: 'name' });
  }
  return err;
}

export function createImageSetsService(deps: { db: Database }) {
  const { db } = deps;

  async function mustFind(teamId: number, setId: number): Promise<ImageSet> {
    const set = await db.repos.imageSets.find(teamId, setId);
    if (!set) throw notFound('Image set');
    return set;
  }

  return {
    list(teamId: number): Promise<ImageSet[]> {
      return db.repos.imageSets.list(teamId);
    },

    get: mustFind,

    async create(teamId: number, actorUserId: number, input: { name: string; description?: string }): Promise<ImageSet> {
      let setId: number;
      try {
        setId = await db.transaction(async (tx) => {
          const id = await tx.imageSets.create({ teamId, name: input.name, description: input.description ?? null, createdBy: actorUserId });
          await recordAudit(tx, { teamId, actorUserId, action: 'image_set.created', targetType: 'image_set', targetId: id, details: { name: input.name } });
          return id;
        });
      } catch (err) {
        throw nameTaken(err, input.name);
      }
      return mustFind(teamId, setId);
    },

    /** Renames, describes and/or assigns roles in one transaction; an image outside the set refuses the whole change. */
    async update(
      teamId: number,
      setId: number,
      changes: { name?: string; description?: string | null; assignments?: { imageId: number; role: ImageRole }[] },
    ): Promise<ImageSet> {
      try {
        await db.transaction(async (tx) => {
          if (!(await tx.imageSets.lock(teamId, setId))) throw notFound('Image set');
          if (changes.assignments) {
            const roles = new Map<number, ImageRole>();
            for (const a of changes.assignments) {
              if (roles.has(a.imageId) && roles.get(a.imageId) !== a.role) {
                throw badRequest(`Image ${a.imageId} is given two different roles`, [{ path: 'assignments', message: `image ${a.imageId} appears twice` }]);
              }
              roles.set(a.imageId, a.role);
            }
            const inSet = new Set((await tx.images.findMany(teamId, [...roles.keys()])).filter((i) => i.setId === setId).map((i) => i.id));
            const strangers = [...roles.keys()].filter((id) => !inSet.has(id));
            if (strangers.length > 0) {
              throw new AppError('validation_failed', 400, `Images ${strangers.join(', ')} are not in this set`, [
                { path: 'assignments', message: `not in this set: ${strangers.join(', ')}` },
              ]);
            }
            for (const role of ['training', 'held-out'] as const) {
              const ids = [...roles].filter(([, r]) => r === role).map(([id]) => id);
              if (ids.length > 0) await tx.images.setRole(teamId, ids, role);
            }
          }
          await tx.imageSets.update(teamId, setId, { name: changes.name, description: changes.description });
        });
      } catch (err) {
        throw nameTaken(err, changes.name);
      }
      return mustFind(teamId, setId);
    },

    async split(
      teamId: number,
      actorUserId: number,
      setId: number,
      input: { heldOutFraction: number; seed: number },
    ): Promise<{ imageSet: ImageSet; images: Image[] }> {
      await db.transaction(async (tx) => {
        if (!(await tx.imageSets.lock(teamId, setId))) throw notFound('Image set');
        const ids = (await tx.images.listBySet(teamId, setId)).map((i) => i.id);
        const heldOut = chooseHeldOut(ids, input.heldOutFraction, input.seed);
        if (heldOut.size === 0 || heldOut.size === ids.length) {
          throw badRequest(
            `A split of ${ids.length} image${ids.length === 1 ? '' : 's'} at ${input.heldOutFraction} would hold out ${heldOut.size}; each side needs at least one image`,
            { images: ids.length, heldOut: heldOut.size },
          );
        }
        await tx.images.setRole(teamId, [...heldOut], 'held-out');
        await tx.images.setRole(teamId, ids.filter((id) => !heldOut.has(id)), 'training');
        await tx.imageSets.touch(teamId, setId);
        await recordAudit(tx, {
          teamId,
          actorUserId,
          action: 'image_set.split',
          targetType: 'image_set',
          targetId: setId,
          details: { heldOutFraction: input.heldOutFraction, seed: input.seed, images: ids.length, heldOut: heldOut.size },
        });
      });
      return { imageSet: await mustFind(teamId, setId), images: await db.repos.images.listBySet(teamId, setId) };
    },

    /**
     * Deletes the set and its image rows; refused (409) while a run uses any of them. Stored objects stay:
     * other rows (other sets, other teams) may share them by hash, and unreferenced ones can be collected later.
     */
    async remove(teamId: number, actorUserId: number, setId: number): Promise<void> {
      let imageIds: number[] = [];
      try {
        await db.transaction(async (tx) => {
          if (!(await tx.imageSets.lock(teamId, setId))) throw notFound('Image set');
          const set = await tx.imageSets.find(teamId, setId);
          const images = await tx.images.listBySet(teamId, setId);
          imageIds = images.map((i) => i.id);
          await refuseIfImagesReleased(tx, teamId, imageIds, 'The image set');
          await tx.imageSets.remove(teamId, setId);
          await recordAudit(tx, {
            teamId,
            actorUserId,
            action: 'image_set.deleted',
            targetType: 'image_set',
            targetId: setId,
            details: { name: set?.name, images: images.length },
          });
        });
      } catch (err) {
        throw await inUseConflict(db, err, imageIds, 'The image set');
      }
    },
  };
}

export type ImageSetsService = ReturnType<typeof createImageSetsService>;
