import type { Image, ImageRole } from '../contracts';
import type { Database } from '../db';
import { notFound } from '../errors';
import type { ContentStore, ThumbnailType } from '../storage/content-store';
import { recordAudit } from './audit';
import { inUseConflict } from './image-sets';
import { refuseIfImagesReleased } from './releases';
import { contentTypeOf, makeThumbnail } from './uploads/inspect-image';

export interface ImageBytes {
  contentType: string;
  /** Quoted strong validator: the stored bytes never change under one hash. */
  etag: string;
}

/** Image rows of a team, their roles, and the stored originals and thumbnails behind them. */
export function createImageRecordsService(deps: { db: Database; store: ContentStore }) {
  const { db, store } = deps;

  async function mustFind(teamId: number, imageId: number): Promise<Image> {
    const image = await db.repos.images.find(teamId, imageId);
    if (!image) throw notFound('Image');
    return image;
  }

  return {
    async listForSet(teamId: number, setId: number, role?: ImageRole): Promise<Image[]> {
      if (!(await db.repos.imageSets.find(teamId, setId))) throw notFound('Image set');
      return db.repos.images.listBySet(teamId, setId, role);
    },

    get: mustFind,

    async setRole(teamId: number, imageId: number, role: ImageRole): Promise<Image> {
      const image = await mustFind(teamId, imageId);
      if (image.role !== role) {
        await db.transaction(async (tx) => {
          await tx.images.setRole(teamId, [imageId], role);
          await tx.imageSets.touch(teamId, image.setId);
        });
      }
      return mustFind(teamId, imageId);
    },

    /** Deletes the row; 409 while a run uses the image. The stored object stays for other rows that share it. */
    async remove(teamId: number, actorUserId: number, imageId: number): Promise<void> {
      try {
        await db.transaction(async (tx) => {
          const image = await tx.images.find(teamId, imageId);
          if (!image) throw notFound('Image');
          await refuseIfImagesReleased(tx, teamId, [imageId], 'The image');
          await tx.imageSets.lock(teamId, image.setId);
          await tx.images.remove(teamId, imageId);
          await tx.imageSets.touch(teamId, image.setId);
          await recordAudit(tx, {
            teamId,
            actorUserId,
            action: 'image.deleted',
            targetType: 'image',
            targetId: imageId,
            details: { setId: image.setId, fileName: image.fileName, sha256: image.sha256 },
          });
        });
      } catch (err) {
        throw await inUseConflict(db, err, [imageId], 'The image');
      }
    },

    /** The thumbnail, remade from the original if it has gone missing (a restored backup of objects/ only). */
    async thumbnail(teamId: number, imageId: number): Promise<ImageBytes & { data: Buffer; contentType: ThumbnailType }> {
      const image = await mustFind(teamId, imageId);
      let thumb = await store.readThumbnail(image.sha256);
      if (!thumb) {
        if (!(await store.has(image.sha256))) throw notFound('Image file');
        const data = await makeThumbnail(store.path(image.sha256), image.width * image.height);
        await store.putThumbnail(image.sha256, data);
        thumb = { data, contentType: 'image/webp' };
      }
      return { ...thumb, etag: `"${image.sha256}"` };
    },

    /** Where the original's bytes are, for streaming with range and conditional requests. */
    async original(teamId: number, imageId: number): Promise<ImageBytes & { path: string; bytes: number }> {
      const image = await mustFind(teamId, imageId);
      if (!(await store.has(image.sha256))) throw notFound('Image file');
      return { path: store.path(image.sha256), contentType: contentTypeOf[image.format], etag: `"${image.sha256}"`, bytes: image.bytes };
    },
  };
}

export type ImageRecordsService = ReturnType<typeof createImageRecordsService>;
