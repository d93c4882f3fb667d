import { strToU8, zipSync, type Zippable } from 'fflate';
import { EngineInputError } from '../input-error';

/** One file of a zip archive: its name inside the archive (forward slashes, no leading slash) and its bytes. */
export interface ZipEntry {
  name: string;
  data: Uint8Array | string;
}

// The archive is written by fflate (a small, dependency-free and widely used zip library): stored entries (method 0,
// PKWARE APPNOTE.TXT 4.4.5), UNIX host and mode in the external attributes (4.4.2), so any unzip reads it and its
// bytes depend only on the entries and the date. The names are checked here first.
const HOST_UNIX = 3;
/** A regular file, rw-r--r-- (st_mode in the high 16 bits of the external attributes, common practice of UNIX zips). */
const FILE_MODE = 0o100644;
/** Without the ZIP64 extensions (APPNOTE 4.5.3) counts are 16-bit and sizes and offsets 32-bit. */
const MAX_ENTRIES = 0xffff;
const MAX_BYTES = 0xffffffff;
/** MS-DOS dates (APPNOTE 4.4.6) start in 1980. */
const DOS_EPOCH = Date.UTC(1980, 0, 1);

/**
 * A zip archive of stored (uncompressed) files. Refuses duplicate or unsafe names (absolute, `..`, backslashes) and
 * archives beyond 4 GiB. The date is written as MS-DOS date and time, 2-second resolution, in the process's local
 * time (UTC on the studio's servers).
 */
export function writeZip(entries: ZipEntry[], modified: Date = new Date(DOS_EPOCH)): Buffer {
  if (entries.length > MAX_ENTRIES) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `a zip without ZIP64 holds at most ${MAX_ENTRIES} files, got ${entries.length}`);
  const mtime = new Date(Math.max(DOS_EPOCH, modified.getTime()));
  const files: Zippable = {};
  let bytes = 0;
  for (const entry of entries) {
    if (!entry.name || entry.name.startsWith('/') || entry.name.includes('\\') || entry.name.split('/').some((part) => part === '..' || part === '')) {
      throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `zip entry name "${entry.name}" is not a relative path`);
    }
    if (Object.hasOwn(files, entry.name)) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `zip entry "${entry.name}" appears twice`);
    const data = typeof entry.data === 'string' ? strToU8(entry.data) : entry.data;
    bytes += 76 + 2 * Buffer.byteLength(entry.name) + data.length;
    if (bytes > MAX_BYTES) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'a zip without ZIP64 is at most 4 GiB');
    files[entry.name] = [data, { level: 0, mtime, os: HOST_UNIX, attrs: (FILE_MODE << 16) >>> 0 }];
  }
  const zipped = zipSync(files);
  return Buffer.from(zipped.buffer, zipped.byteOffset, zipped.byteLength);
}
