import type { UploadResult } from '../contracts';
import type { Database } from '../db';
import { AppError, badRequest, notFound } from '../errors';
import type { ContentStore } from '../storage/content-store';
import { Readable } from 'node:stream';
import type { ScratchFolder, Spool, SpooledFile } from '../storage/spool';
import { recordAudit } from './audit';
import { ImageRejected, inspectImage, type InspectedImage } from './uploads/inspect-image';
import { formatBytes, type Rejection } from './uploads/rejection';
import { createSlots } from './uploads/slots';
import { isZipFile, unpackZip, zipBudget } from './uploads/zip-archive';

export interface UploadLimits {
  /** Per uploaded file and per archive entry. */
  maxFileBytes: number;
  maxImagePixels: number;
  zipMaxEntries: number;
  zipMaxTotalBytes: number;
}

export interface UploadedFile {
  /** The name the client gave; display only. */
  name: string;
  /** The part as received, in the request's scratch folder. */
  file: SpooledFile;
}

interface Accepted extends InspectedImage {
  label: string;
  fileName: string;
  sha256: string;
  bytes: number;
}

const fileNameLimit = 255;

/**
 * A name fit to show: the last path segment of what the client sent (browsers on Windows may send the
 * full path), without control characters, at most 255 characters.
 */
export function displayName(name: string, fallback = 'unnamed'): string {
  const clean = name.replace(/[\u0000-\u001f\u007f]/g, '').trim();
  const last = clean.split(/[/\\]/).filter(Boolean).pop() ?? '';
  return clip(last) || fallback;
}

/** Keeps the end of an over-long name: the extension and the distinguishing tail matter more than the start. */
function clip(name: string): string {
  const chars = [...name];
  return chars.length <= fileNameLimit ? name : `…${chars.slice(chars.length - fileNameLimit + 1).join('')}`;
}

/**
 * Files decoded at once in the whole process, whatever the number of uploads in progress: each decode holds a
 * decoder's working set and the file's bytes for the trailing-data check, and libvips already runs each image
 * on a pool of threads (sharp.concurrency, one per core by default), so more at once would add memory, not speed.
 */
const inspectionsAtOnce = 2;

export function createImageUploadsService(deps: { db: Database; store: ContentStore; spool: Spool; limits: UploadLimits }) {
  const { db, store, limits } = deps;
  const inspections = createSlots(inspectionsAtOnce);

  return {
    /** A private folder for one upload's files, under DATA_DIR; upload() removes it. */
    scratchFolder(): Promise<ScratchFolder> {
      return deps.spool.folder();
    },

    /**
     * Adds images (and the images inside .zip archives) to a set. Each file is decoded in full, from disk,
     * before it is stored; bad files are reported by name while the good ones are kept; rows for the new images
     * are written in one transaction at the end. A file whose bytes the set already holds is reported as a
     * duplicate. Objects stored before a failed transaction stay unreferenced and harmless (the store is
     * content-addressed). The scratch folder holding the files (and archive entries as they are unpacked) is
     * the caller's; it is removed here once the upload is decided, whatever the outcome.
     */
    async upload(teamId: number, actorUserId: number, setId: number, files: UploadedFile[], scratch: ScratchFolder): Promise<UploadResult> {
      try {
        return await addFiles(teamId, actorUserId, setId, files, scratch);
      } finally {
        await scratch.remove();
      }
    },

    /** upload() for files already in memory (the demo seed): they are spooled to a scratch folder first. */
    async uploadBuffers(teamId: number, actorUserId: number, setId: number, buffers: { name: string; data: Buffer }[]): Promise<UploadResult> {
      const scratch = await deps.spool.folder();
      const files: UploadedFile[] = [];
      try {
        for (const b of buffers) files.push({ name: b.name, file: await scratch.write(Readable.from([b.data])) });
      } catch (err) {
        await scratch.remove();
        throw err;
      }
      return this.upload(teamId, actorUserId, setId, files, scratch);
    },
  };

  async function addFiles(teamId: number, actorUserId: number, setId: number, files: UploadedFile[], scratch: ScratchFolder): Promise<UploadResult> {
      if (files.length === 0) throw badRequest('No files: send images or .zip archives in the multipart field "files"');
      if (!(await db.repos.imageSets.find(teamId, setId))) throw notFound('Image set');

      const rejected: Rejection[] = [];
      const duplicates: UploadResult['duplicates'] = [];
      const repeats: { file: string; sha256: string }[] = [];
      const accepted: Accepted[] = [];
      const seen = new Set<string>();

      const consider = async (label: string, fileName: string, file: SpooledFile) => {
        if (file.bytes > limits.maxFileBytes) {
          rejected.push({ file: label, message: `${label}: is ${formatBytes(file.bytes)}, larger than the ${formatBytes(limits.maxFileBytes)} limit per file` });
          return;
        }
        const { sha256 } = file;
        if (seen.has(sha256)) {
          repeats.push({ file: label, sha256 });
          return;
        }
        const existing = (await db.repos.images.idsBySha(setId, [sha256])).get(sha256);
        if (existing !== undefined) {
          duplicates.push({ file: label, imageId: existing });
          return;
        }
        let inspected: InspectedImage;
        try {
          inspected = await inspections.run(() => inspectImage(file, label, { maxPixels: limits.maxImagePixels }));
        } catch (err) {
          if (!(err instanceof ImageRejected)) throw err;
          rejected.push({ file: label, message: err.message });
          return;
        }
        await store.putFile(file);
        await store.putThumbnail(sha256, inspected.thumbnail);
        seen.add(sha256);
        accepted.push({ ...inspected, label, fileName, sha256, bytes: file.bytes });
      };

      const budget = zipBudget(limits.zipMaxEntries, limits.zipMaxTotalBytes);
      for (const file of files) {
        const name = displayName(file.name);
        if (await isZipFile(file.file.path)) {
          let members = 0;
          const unpack = { maxEntryBytes: limits.maxFileBytes, budget, extract: scratch.write };
          const problems = await unpackZip(file.file.path, name, unpack, (m) => {
            members += 1;
            return consider(m.label, clip(m.path), m.file);
          });
          rejected.push(...problems);
          if (members === 0 && problems.length === 0) rejected.push({ file: name, message: `${name}: the archive holds no files` });
        } else {
          await consider(name, name, file.file);
        }
      }

      if (accepted.length === 0 && duplicates.length === 0 && repeats.length === 0) {
        throw new AppError('bad_request', 400, `None of the ${files.length === 1 ? 'uploaded file' : `${files.length} uploaded files`} could be used`, rejected);
      }

      const { images, idOf } = await db.transaction(async (tx) => {
        if (!(await tx.imageSets.lock(teamId, setId))) throw notFound('Image set');
        // Another upload into the same set may have committed the same bytes since they were checked above.
        const already = await tx.images.idsBySha(setId, accepted.map((a) => a.sha256));
        const idOf = new Map(already);
        const inserted: number[] = [];
        for (const a of accepted) {
          const prior = already.get(a.sha256);
          if (prior !== undefined) {
            duplicates.push({ file: a.label, imageId: prior });
            continue;
          }
          const id = await tx.images.insert({
            teamId,
            setId,
            fileName: a.fileName,
            sha256: a.sha256,
            width: a.width,
            height: a.height,
            channels: a.channels,
            format: a.format,
            bytes: a.bytes,
          });
          idOf.set(a.sha256, id);
          inserted.push(id);
        }
        if (inserted.length > 0) {
          await tx.imageSets.touch(teamId, setId);
          await recordAudit(tx, {
            teamId,
            actorUserId,
            action: 'images.uploaded',
            targetType: 'image_set',
            targetId: setId,
            details: { imageIds: inserted, duplicates: duplicates.length + repeats.length, rejected: rejected.length },
          });
        }
        return { images: await tx.images.findMany(teamId, inserted), idOf };
      });

      for (const r of repeats) duplicates.push({ file: r.file, imageId: idOf.get(r.sha256)! });
      return { images, rejected, duplicates };
  }
}

export type ImageUploadsService = ReturnType<typeof createImageUploadsService>;
