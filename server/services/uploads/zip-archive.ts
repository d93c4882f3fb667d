import { open, rm } from 'node:fs/promises';
import type { Readable } from 'node:stream';
import yauzl, { type Entry, type ZipFile } from 'yauzl';
import type { SpooledFile } from '../../storage/spool';
import { formatBytes, type Rejection } from './rejection';

/** A local file header starts every zip that holds at least one file (APPNOTE.TXT 4.3.7). */
export function isZipArchive(data: Buffer): boolean {
  return data.length >= 4 && data[0] === 0x50 && data[1] === 0x4b && data[2] === 0x03 && data[3] === 0x04;
}

/** isZipArchive for a file on disk, reading its first four bytes only. */
export async function isZipFile(file: string): Promise<boolean> {
  const handle = await open(file, 'r');
  try {
    const head = Buffer.alloc(4);
    const { bytesRead } = await handle.read(head, 0, 4, 0);
    return isZipArchive(head.subarray(0, bytesRead));
  } finally {
    await handle.close();
  }
}

/**
 * What one upload request may still unpack, shared by all the archives in it, so many modest archives in
 * one request cannot add up to what a single one may not.
 */
export interface ZipBudget {
  readonly maxEntries: number;
  readonly maxTotalBytes: number;
  entriesLeft: number;
  bytesLeft: number;
}

export function zipBudget(maxEntries: number, maxTotalBytes: number): ZipBudget {
  return { maxEntries, maxTotalBytes, entriesLeft: maxEntries, bytesLeft: maxTotalBytes };
}

export interface ZipMember {
  /** `archive.zip/path/inside.png`: how messages name the entry. */
  label: string;
  /** The path inside the archive, for display. */
  path: string;
  /** The unpacked entry, in the caller's scratch folder; deleted after onEntry unless onEntry moved it. */
  file: SpooledFile;
}

export interface UnpackOptions {
  maxEntryBytes: number;
  budget: ZipBudget;
  /** Writes an entry's bytes to a file (ScratchFolder.write), so no entry is ever held in memory whole. */
  extract(source: Readable, options: { maxBytes: number }): Promise<SpooledFile>;
}

/**
 * Why a path may not be unpacked, or null when it stays inside the archive: absolute paths, drive letters,
 * `..` segments, backslashes (a separator on Windows that hides `..\`), and control characters.
 */
export function unsafeEntryPath(name: string): string | null {
  if (name.length === 0) return 'has an empty name';
  if (/[\u0000-\u001f\u007f]/.test(name)) return 'has control characters in its name';
  if (name.includes('\\')) return 'uses a backslash in its path';
  if (name.startsWith('/')) return 'is an absolute path';
  if (/^[a-zA-Z]:/.test(name)) return 'names a drive';
  if (name.split('/').includes('..')) return 'climbs out of the archive with ..';
  return null;
}

/** Folders, resource forks that macOS archivers add, and dot files carry no images. */
function skipped(name: string): boolean {
  if (name.endsWith('/')) return true;
  if (name === '__MACOSX' || name.startsWith('__MACOSX/')) return true;
  return name.split('/').some((segment) => segment.startsWith('.'));
}

const reasonOf = (err: unknown) => (err instanceof Error ? err.message.split('\n')[0] : String(err));

async function extractEntry(zip: ZipFile, entry: Entry, options: UnpackOptions): Promise<SpooledFile> {
  return options.extract(await zip.openReadStreamPromise(entry), { maxBytes: options.maxEntryBytes });
}

interface Candidate {
  entry: Entry;
  path: string;
}

/** Reads the central directory only; refuses the whole archive when it is over the request's budget. */
async function listEntries(zip: ZipFile, archiveName: string, budget: ZipBudget): Promise<{ candidates: Candidate[]; rejected: Rejection[] } | Rejection> {
  if (zip.entryCount > budget.entriesLeft) {
    return {
      file: archiveName,
      message: `${archiveName}: holds ${zip.entryCount} entries, more than the ${budget.entriesLeft} left of the ${budget.maxEntries} an upload may unpack; nothing in it was used`,
    };
  }
  const candidates: Candidate[] = [];
  const rejected: Rejection[] = [];
  for await (const entry of zip.eachEntry()) {
    // Strings are decoded here rather than by yauzl, which would abandon the whole archive at the first unsafe name.
    const name = yauzl.getFileNameLowLevel(entry.generalPurposeBitFlag, entry.fileNameRaw, entry.extraFields, true);
    const unsafe = unsafeEntryPath(name);
    if (unsafe) {
      rejected.push({ file: `${archiveName}/${name}`, message: `${archiveName}: the entry "${name}" ${unsafe}; it was refused` });
      continue;
    }
    if (!skipped(name)) candidates.push({ entry, path: name });
  }
  const declared = candidates.reduce((sum, c) => sum + c.entry.uncompressedSize, 0);
  if (declared > budget.bytesLeft) {
    return {
      file: archiveName,
      message: `${archiveName}: unpacks to ${formatBytes(declared)}, more than the ${formatBytes(budget.bytesLeft)} left of the ${formatBytes(budget.maxTotalBytes)} an upload may unpack; nothing in it was used`,
    };
  }
  budget.entriesLeft -= zip.entryCount;
  return { candidates, rejected };
}

/**
 * Unpacks a zip (a file on disk, or bytes in memory) and hands each file entry to onEntry, one at a time,
 * as a file of its own, so at most one unpacked entry exists at once and none is held in memory. Unsafe
 * paths, oversized, encrypted, nested or unreadable entries are rejected by name and the rest are still
 * handed on; an archive over the entry or byte budget is refused before any of it is unpacked. Sizes are
 * checked against what the archive declares as the bytes stream in (validateEntrySizes), so a lying
 * header cannot slip past the budget.
 */
export async function unpackZip(
  archive: string | Buffer,
  archiveName: string,
  options: UnpackOptions,
  onEntry: (member: ZipMember) => Promise<void>,
): Promise<Rejection[]> {
  let zip: ZipFile;
  // autoClose off: the whole directory is listed before any entry is read, and yauzl would otherwise close
  // the file after the last directory entry; the finally below closes it.
  const zipOptions = { lazyEntries: true, decodeStrings: false, validateEntrySizes: true, autoClose: false };
  try {
    zip = typeof archive === 'string' ? await yauzl.openPromise(archive, zipOptions) : await yauzl.fromBufferPromise(archive, zipOptions);
  } catch (err) {
    return [{ file: archiveName, message: `${archiveName}: not a readable zip archive (${reasonOf(err)})` }];
  }
  const { budget } = options;
  try {
    let listed: Awaited<ReturnType<typeof listEntries>>;
    try {
      listed = await listEntries(zip, archiveName, budget);
    } catch (err) {
      return [{ file: archiveName, message: `${archiveName}: the archive's directory is damaged (${reasonOf(err)})` }];
    }
    if (!('candidates' in listed)) return [listed];
    const rejected = [...listed.rejected];
    for (const { entry, path } of listed.candidates) {
      const label = `${archiveName}/${path}`;
      const reject = (why: string) => rejected.push({ file: label, message: `${label}: ${why}` });
      if (entry.isEncrypted()) {
        reject('is encrypted; encrypted entries are not supported');
        continue;
      }
      if (entry.uncompressedSize > options.maxEntryBytes) {
        reject(`is ${formatBytes(entry.uncompressedSize)}, larger than the ${formatBytes(options.maxEntryBytes)} limit per file`);
        continue;
      }
      let file: SpooledFile;
      try {
        file = await extractEntry(zip, entry, options);
      } catch (err) {
        reject(`cannot be unpacked (${reasonOf(err)})`);
        continue;
      }
      try {
        budget.bytesLeft -= file.bytes;
        if (await isZipFile(file.path)) reject('is itself a zip archive; archives inside archives are not unpacked');
        else await onEntry({ label, path, file });
      } finally {
        await rm(file.path, { force: true });
      }
    }
    return rejected;
  } finally {
    zip.close();
  }
}
