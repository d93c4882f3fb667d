import { createHash, randomBytes } from 'node:crypto';
import { constants as fsConstants } from 'node:fs';
import { access, mkdir, open, readFile, rename, rm } from 'node:fs/promises';
import path from 'node:path';

const sha256Pattern = /^[0-9a-f]{64}$/;

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
  /** Absolute path of an original; the file exists only if has() says so. */
  path(sha256: string): string;
  read(sha256: string): Promise<Buffer>;
  has(sha256: string): Promise<boolean>;
  /** Stores a PNG or WebP thumbnail for the original with this hash, replacing any earlier one. */
  putThumbnail(sha256: string, image: Buffer): Promise<void>;
  thumbnailPath(sha256: string): string;
  /** The thumbnail's bytes and media type, or null when none was made. */
  readThumbnail(sha256: string): Promise<{ data: Buffer; contentType: ThumbnailType } | null>;
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
      if (await exists(file)) return { sha256, existed: true };
      // Two uploads of the same bytes may race here; both renames install identical content.
      await writeAtomically(file, buffer);
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
  };
}
