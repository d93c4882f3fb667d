import { createHash, randomBytes } from 'node:crypto';
import { constants as fsConstants } from 'node:fs';
import { access, chmod, copyFile, mkdir, open, readdir, readFile, rename, rm, stat, utimes } from 'node:fs/promises';
import path from 'node:path';
import type { SpooledFile } from './spool';

const sha256Pattern = /^[0-9a-f]{64}$/;

/**
 * The database named lock (Database.withNamedLock) a store sweep and a backup both hold, so a backup
 * never copies the store while a sweep is deleting from it.
 */
export const contentStoreLock = 'content-store';

/** The media types a stored thumbnail may have, told apart by their leading bytes. */
export type ThumbnailType = 'image/webp' | 'image/png';

export interface StoredObject {
  sha256: string;
  /** True when the same bytes were already stored; nothing was written then. */
  existed: boolean;
}

export interface ContentStore {
  /** Stores bytes under their SHA-256; the same content is kept once however often it is put. */
  put(buffer: Buffer): Promise<StoredObject>;
  /**
   * Stores a spooled file under the SHA-256 its spool computed, moving it into place (the file is gone from
   * the scratch folder afterwards unless the same bytes were already stored).
   */
  putFile(file: SpooledFile): Promise<StoredObject>;
  /** Absolute path of an original; the file exists only if has() says so. */
  path(sha256: string): string;
  read(sha256: string): Promise<Buffer>;
  has(sha256: string): Promise<boolean>;
  /** Stores a PNG or WebP thumbnail for the original with this hash, replacing any earlier one. */
  putThumbnail(sha256: string, image: Buffer): Promise<void>;
  thumbnailPath(sha256: string): string;
  /** The thumbnail's bytes and media type, or null when none was made. */
  readThumbnail(sha256: string): Promise<{ data: Buffer; contentType: ThumbnailType } | null>;
  /** Every stored original, by fan-out folder, with the time it was last put. */
  objects(): AsyncGenerator<StoredEntry[]>;
  /**
   * Deletes an original (and its thumbnail) last put before `notAfterMs`, unless `inUse` says a record
   * still names it; the bytes freed, or null when it was kept. Safe against a concurrent put of the same bytes.
   */
  discardUnused(sha256: string, options: { notAfterMs: number; inUse: () => Promise<boolean> }): Promise<number | null>;
  /**
   * Deletes temporaries (of writes cut short by a crash) and orphaned thumbnails older than `notAfterMs`;
   * an original a crashed sweep left moved aside goes back in place, for the next sweep to judge again.
   */
  removeLeftovers(notAfterMs: number): Promise<{ files: number; bytes: number }>;
}

export interface StoredEntry {
  sha256: string;
  /** When the bytes were last put (written, or found already stored). */
  mtimeMs: number;
  bytes: number;
}

export function sha256Of(buffer: Buffer): string {
  return createHash('sha256').update(buffer).digest('hex');
}

export function thumbnailTypeOf(image: Buffer): ThumbnailType | null {
  if (image.length >= 12 && image.toString('latin1', 0, 4) === 'RIFF' && image.toString('latin1', 8, 12) === 'WEBP') {
    return 'image/webp';
  }
  if (image.length >= 8 && image.subarray(0, 8).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]))) {
    return 'image/png';
  }
  return null;
}

function checkedHash(sha256: string): string {
  // The hash becomes a path: anything but 64 lower-case hex digits could name a file elsewhere.
  if (!sha256Pattern.test(sha256)) throw new RangeError(`not a SHA-256 hex digest: ${JSON.stringify(sha256)}`);
  return sha256;
}

async function exists(file: string): Promise<boolean> {
  try {
    await access(file, fsConstants.F_OK);
    return true;
  } catch {
    return false;
  }
}

/**
 * Writes through a temporary file in the destination folder, fsyncs it and renames it into place, so a
 * reader (or a restart after a crash) sees either no file or the whole file. The folder is fsynced too,
 * so the rename itself survives a power loss.
 */
async function writeAtomically(file: string, data: Buffer): Promise<void> {
  const dir = path.dirname(file);
  await mkdir(dir, { recursive: true });
  // Dot-prefixed so the temporary can never be taken for an object (objects are bare hex names).
  const temp = path.join(dir, `.tmp-${process.pid}-${randomBytes(6).toString('hex')}`);
  const handle = await open(temp, 'wx', 0o640);
  try {
    await handle.writeFile(data);
    await handle.sync();
  } catch (err) {
    await handle.close().catch(() => undefined);
    await rm(temp, { force: true });
    throw err;
  }
  await handle.close();
  try {
    await rename(temp, file);
  } catch (err) {
    await rm(temp, { force: true });
    throw err;
  }
  const dirHandle = await open(dir, 'r');
  try {
    await dirHandle.sync();
  } finally {
    await dirHandle.close();
  }
}

/** fsyncs a file (or folder) by path. */
async function syncPath(target: string, flags = 'r'): Promise<void> {
  const handle = await open(target, flags);
  try {
    await handle.sync();
  } finally {
    await handle.close();
  }
}

/**
 * Moves a finished file into place as writeAtomically does: durable before the rename, the rename durable after.
 * A spool on another file system (EXDEV) is copied to a temporary beside the destination first.
 */
async function installAtomically(source: string, file: string): Promise<void> {
  const dir = path.dirname(file);
  await mkdir(dir, { recursive: true });
  await chmod(source, 0o640);
  await syncPath(source);
  try {
    await rename(source, file);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code !== 'EXDEV') throw err;
    const temp = path.join(dir, `.tmp-${process.pid}-${randomBytes(6).toString('hex')}`);
    try {
      await copyFile(source, temp);
      await syncPath(temp);
      await rename(temp, file);
    } catch (copyErr) {
      await rm(temp, { force: true });
      throw copyErr;
    }
  }
  await syncPath(dir);
}

/**
 * Content-addressed files under dataDir: originals at objects/<first two hex>/<sha256> and thumbnails at
 * thumbnails/<first two hex>/<sha256>, with no extension and never a name a client chose. The two-level
 * fan-out keeps any one folder to a few thousand entries.
 */
export function createContentStore(dataDir: string): ContentStore {
  const root = path.resolve(dataDir);
  const objectPath = (sha256: string) => path.join(root, 'objects', checkedHash(sha256).slice(0, 2), sha256);
  const thumbnailPath = (sha256: string) => path.join(root, 'thumbnails', checkedHash(sha256).slice(0, 2), sha256);

  return {
    async put(buffer) {
      const sha256 = sha256Of(buffer);
      const file = objectPath(sha256);
      // Touching (rather than only testing) an existing object restarts its grace period, so the sweep
      // cannot delete it between this put and the database row that will name it. If the sweep has just
      // moved it aside, the touch fails and the bytes are written again.
      if (await touch(file)) return { sha256, existed: true };
      // Two uploads of the same bytes may race here; both renames install identical content.
      await writeAtomically(file, buffer);
      return { sha256, existed: false };
    },
    async putFile(spooled) {
      const { sha256 } = spooled;
      const file = objectPath(sha256);
      // As in put: an existing object's time is renewed, or the bytes are written again if the sweep has moved it.
      if (await touch(file)) return { sha256, existed: true };
      await installAtomically(spooled.path, file);
      return { sha256, existed: false };
    },
    path: objectPath,
    read(sha256) {
      return readFile(objectPath(sha256));
    },
    has(sha256) {
      return exists(objectPath(sha256));
    },
    async putThumbnail(sha256, image) {
      if (!thumbnailTypeOf(image)) throw new RangeError('a thumbnail must be a PNG or WebP image');
      await writeAtomically(thumbnailPath(sha256), image);
    },
    thumbnailPath,
    async readThumbnail(sha256) {
      let data: Buffer;
      try {
        data = await readFile(thumbnailPath(sha256));
      } catch (err) {
        if ((err as NodeJS.ErrnoException).code === 'ENOENT') return null;
        throw err;
      }
      const contentType = thumbnailTypeOf(data);
      return contentType ? { data, contentType } : null;
    },
    async *objects() {
      for (const fan of await listFolder(path.join(root, 'objects'))) {
        if (!/^[0-9a-f]{2}$/.test(fan)) continue;
        const dir = path.join(root, 'objects', fan);
        const entries: StoredEntry[] = [];
        for (const name of await listFolder(dir)) {
          if (!sha256Pattern.test(name) || name.slice(0, 2) !== fan) continue;
          const info = await statOrNull(path.join(dir, name));
          if (info?.isFile()) entries.push({ sha256: name, mtimeMs: info.mtimeMs, bytes: info.size });
        }
        if (entries.length > 0) yield entries;
      }
    },
    async discardUnused(sha256, { notAfterMs, inUse }) {
      const file = objectPath(sha256);
      const before = await statOrNull(file);
      if (!before || before.mtimeMs > notAfterMs || (await inUse())) return null;
      // Move it aside first: from here on a put of the same bytes writes a fresh copy instead of
      // relying on this one. A put that came before the move shows in the moved file's time.
      const aside = path.join(path.dirname(file), `.sweep-${sha256}-${randomBytes(6).toString('hex')}`);
      try {
        await rename(file, aside);
      } catch (err) {
        if ((err as NodeJS.ErrnoException).code === 'ENOENT') return null;
        throw err;
      }
      const moved = await statOrNull(aside);
      if (!moved || moved.mtimeMs > notAfterMs || (await inUse())) {
        // Still wanted after all: put it back (identical bytes if a put has written it again meanwhile).
        if (moved) await rename(aside, file);
        return null;
      }
      await rm(aside, { force: true });
      // Only when no newer copy arrived: a thumbnail belongs to whichever copy is in place.
      if (!(await exists(file))) await rm(thumbnailPath(sha256), { force: true });
      return moved.size;
    },
    async removeLeftovers(notAfterMs) {
      let files = 0;
      let bytes = 0;
      for (const folder of ['objects', 'thumbnails'] as const) {
        for (const fan of await listFolder(path.join(root, folder))) {
          const dir = path.join(root, folder, fan);
          for (const name of await listFolder(dir)) {
            const file = path.join(dir, name);
            const temporary = name.startsWith('.tmp-') || name.startsWith('.sweep-');
            const orphanThumbnail = folder === 'thumbnails' && sha256Pattern.test(name) && !(await exists(objectPath(name)));
            if (!temporary && !orphanThumbnail) continue;
            const info = await statOrNull(file);
            // ctime: a rename (moving aside) renews it, so a sweep still at work elsewhere is left alone.
            if (!info?.isFile() || Math.max(info.mtimeMs, info.ctimeMs) > notAfterMs) continue;
            const asideOf = /^\.sweep-([0-9a-f]{64})-/.exec(name)?.[1];
            if (folder === 'objects' && asideOf && !(await exists(objectPath(asideOf)))) {
              // Whether a record came to name it cannot be told from here; putting it back loses nothing.
              await rename(file, objectPath(asideOf));
              continue;
            }
            await rm(file, { force: true });
            files += 1;
            bytes += info.size;
          }
        }
      }
      return { files, bytes };
    },
  };
}

/** Sets an existing file's times to now; false when there is no such file. */
async function touch(file: string): Promise<boolean> {
  const now = new Date();
  try {
    await utimes(file, now, now);
    return true;
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return false;
    throw err;
  }
}

async function listFolder(dir: string): Promise<string[]> {
  try {
    return (await readdir(dir)).sort();
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return [];
    throw err;
  }
}

async function statOrNull(file: string) {
  try {
    return await stat(file);
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw err;
  }
}
