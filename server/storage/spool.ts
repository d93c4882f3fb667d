import { createHash } from 'node:crypto';
import { createWriteStream } from 'node:fs';
import { mkdir, mkdtemp, readdir, rm, stat } from 'node:fs/promises';
import path from 'node:path';
import { Transform, type Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';

declare const spooled: unique symbol;

/**
 * A file written by a scratch folder: its SHA-256 and size are those of exactly the bytes written, so the
 * content store may take it under that name without reading it again. Only ScratchFolder.write makes one.
 */
export interface SpooledFile {
  readonly [spooled]: true;
  readonly path: string;
  readonly sha256: string;
  readonly bytes: number;
}

/** Thrown by ScratchFolder.write when the stream carries more than maxBytes; nothing of it is kept. */
export class SpoolLimitExceeded extends Error {
  constructor(readonly limit: number) {
    super(`more than ${limit} bytes`);
    this.name = 'SpoolLimitExceeded';
  }
}

/** One request's temporaries: a private folder that remove() deletes with whatever is left in it. */
export interface ScratchFolder {
  readonly path: string;
  /** Streams `source` into a new file of the folder, hashing and counting as it goes; memory stays at one chunk. */
  write(source: Readable, options?: { maxBytes?: number }): Promise<SpooledFile>;
  /** Deletes the folder and everything in it; later calls do nothing. */
  remove(): Promise<void>;
}

export interface Spool {
  /** DATA_DIR/tmp/uploads: outside the store's folders, so neither backups nor the store's listing see it. */
  readonly root: string;
  folder(): Promise<ScratchFolder>;
  /** Deletes scratch folders last changed before `notAfterMs` (left by a process that was killed mid-upload). */
  removeLeftovers(notAfterMs: number): Promise<{ files: number; bytes: number }>;
}

function hashingCounter(maxBytes: number) {
  const hash = createHash('sha256');
  let bytes = 0;
  const tap = new Transform({
    transform(chunk: Buffer, _encoding, done) {
      bytes += chunk.length;
      if (bytes > maxBytes) return done(new SpoolLimitExceeded(maxBytes));
      hash.update(chunk);
      done(null, chunk);
    },
  });
  return { tap, result: () => ({ sha256: hash.digest('hex'), bytes }) };
}

function scratchFolder(dir: string): ScratchFolder {
  let files = 0;
  let removed: Promise<void> | undefined;
  return {
    path: dir,
    async write(source, options = {}) {
      const file = path.join(dir, `part-${++files}`);
      const { tap, result } = hashingCounter(options.maxBytes ?? Number.POSITIVE_INFINITY);
      try {
        // 'wx': a fresh file only; 0600 until the content store takes it under its own mode.
        await pipeline(source, tap, createWriteStream(file, { flags: 'wx', mode: 0o600 }));
      } catch (err) {
        await rm(file, { force: true });
        throw err;
      }
      return { path: file, ...result() } as SpooledFile;
    },
    remove() {
      removed ??= rm(dir, { recursive: true, force: true, maxRetries: 3 });
      return removed;
    },
  };
}

/** The files of a scratch folder, their bytes, and the last time the folder or any file in it changed. */
async function survey(dir: string): Promise<{ files: number; bytes: number; changedMs: number } | null> {
  const info = await stat(dir).catch(() => null);
  if (!info?.isDirectory()) return null;
  let files = 0;
  let bytes = 0;
  let changedMs = Math.max(info.mtimeMs, info.ctimeMs);
  for (const name of await readdir(dir).catch(() => [] as string[])) {
    const file = await stat(path.join(dir, name)).catch(() => null);
    if (!file?.isFile()) continue;
    files += 1;
    bytes += file.size;
    changedMs = Math.max(changedMs, file.mtimeMs, file.ctimeMs);
  }
  return { files, bytes, changedMs };
}

export function createSpool(dataDir: string): Spool {
  const root = path.join(path.resolve(dataDir), 'tmp', 'uploads');
  return {
    root,
    async folder() {
      await mkdir(root, { recursive: true, mode: 0o700 });
      return scratchFolder(await mkdtemp(path.join(root, 'req-')));
    },
    async removeLeftovers(notAfterMs) {
      let files = 0;
      let bytes = 0;
      for (const name of await readdir(root).catch(() => [] as string[])) {
        const dir = path.join(root, name);
        // A file being written has a fresh time, so a live upload's folder is never taken for a leftover.
        const left = await survey(dir);
        if (!left || left.changedMs > notAfterMs) continue;
        await rm(dir, { recursive: true, force: true });
        files += left.files;
        bytes += left.bytes;
      }
      return { files, bytes };
    },
  };
}
