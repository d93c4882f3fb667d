import { crc32 } from 'node:zlib';
import { EngineInputError } from '../input-error';

/** One file of a zip archive: its name inside the archive (forward slashes, no leading slash) and its bytes. */
export interface ZipEntry {
  name: string;
  data: Uint8Array | string;
}

// PKWARE APPNOTE.TXT 6.3.10, section 4: signatures (4.3.7, 4.3.12, 4.3.16), "version needed" 1.0 for stored files
// (4.4.3.2), general purpose bit 11 for UTF-8 names (4.4.4), compression method 0 = stored (4.4.5).
const LOCAL_SIGNATURE = 0x04034b50;
const CENTRAL_SIGNATURE = 0x02014b50;
const END_SIGNATURE = 0x06054b50;
const VERSION_NEEDED = 10;
/** Made by: host 3 (UNIX) in the high byte, so the external attributes below are read as a file mode (4.4.2). */
const VERSION_MADE_BY = (3 << 8) | 20;
const UTF8_NAMES = 0x0800;
/** A regular file, rw-r--r-- (st_mode in the high 16 bits of the external attributes, common practice of UNIX zips). */
const FILE_MODE = 0o100644;
/** Without the ZIP64 extensions (4.5.3) counts are 16-bit and sizes and offsets 32-bit. */
const MAX_ENTRIES = 0xffff;
const MAX_OFFSET = 0xffffffff;

/** MS-DOS date and time (4.4.6): 2-second resolution, years 1980..2107, local fields written from UTC. */
function dosDateTime(when: Date): { date: number; time: number } {
  const year = Math.min(2107, Math.max(1980, when.getUTCFullYear()));
  const early = when.getUTCFullYear() < 1980;
  return {
    date: early ? (0 << 9) | (1 << 5) | 1 : ((year - 1980) << 9) | ((when.getUTCMonth() + 1) << 5) | when.getUTCDate(),
    time: early ? 0 : (when.getUTCHours() << 11) | (when.getUTCMinutes() << 5) | Math.floor(when.getUTCSeconds() / 2),
  };
}

/**
 * A zip archive of stored (uncompressed) files: each local header and file, then the central directory and its end
 * record. No compression, encryption, data descriptors or ZIP64, so any unzip reads it and its bytes depend only on
 * the entries and the date. Refuses duplicate or unsafe names (absolute, `..`, backslashes) and archives beyond 4 GiB.
 */
export function writeZip(entries: ZipEntry[], modified: Date = new Date(Date.UTC(1980, 0, 1))): Buffer {
  if (entries.length > MAX_ENTRIES) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `a zip without ZIP64 holds at most ${MAX_ENTRIES} files, got ${entries.length}`);
  const seen = new Set<string>();
  const { date, time } = dosDateTime(modified);
  const locals: Buffer[] = [];
  const centrals: Buffer[] = [];
  let offset = 0;
  for (const entry of entries) {
    if (!entry.name || entry.name.startsWith('/') || entry.name.includes('\\') || entry.name.split('/').some((part) => part === '..' || part === '')) {
      throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `zip entry name "${entry.name}" is not a relative path`);
    }
    if (seen.has(entry.name)) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `zip entry "${entry.name}" appears twice`);
    seen.add(entry.name);
    const name = Buffer.from(entry.name, 'utf8');
    const data = typeof entry.data === 'string' ? Buffer.from(entry.data, 'utf8') : Buffer.from(entry.data.buffer, entry.data.byteOffset, entry.data.byteLength);
    const crc = crc32(data);
    const local = Buffer.alloc(30 + name.length);
    local.writeUInt32LE(LOCAL_SIGNATURE, 0);
    local.writeUInt16LE(VERSION_NEEDED, 4);
    local.writeUInt16LE(UTF8_NAMES, 6);
    local.writeUInt16LE(0, 8); // stored
    local.writeUInt16LE(time, 10);
    local.writeUInt16LE(date, 12);
    local.writeUInt32LE(crc, 14);
    local.writeUInt32LE(data.length, 18); // compressed size = size, stored
    local.writeUInt32LE(data.length, 22);
    local.writeUInt16LE(name.length, 26);
    local.writeUInt16LE(0, 28); // no extra field
    name.copy(local, 30);
    const central = Buffer.alloc(46 + name.length);
    central.writeUInt32LE(CENTRAL_SIGNATURE, 0);
    central.writeUInt16LE(VERSION_MADE_BY, 4);
    central.writeUInt16LE(VERSION_NEEDED, 6);
    central.writeUInt16LE(UTF8_NAMES, 8);
    central.writeUInt16LE(0, 10);
    central.writeUInt16LE(time, 12);
    central.writeUInt16LE(date, 14);
    central.writeUInt32LE(crc, 16);
    central.writeUInt32LE(data.length, 20);
    central.writeUInt32LE(data.length, 24);
    central.writeUInt16LE(name.length, 28);
    // extra length, comment length, disk number start, internal attributes: all 0
    central.writeUInt32LE((FILE_MODE << 16) >>> 0, 38);
    if (offset > MAX_OFFSET) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'a zip without ZIP64 is at most 4 GiB');
    central.writeUInt32LE(offset, 42);
    name.copy(central, 46);
    locals.push(local, data);
    centrals.push(central);
    offset += local.length + data.length;
  }
  const centralSize = centrals.reduce((n, c) => n + c.length, 0);
  if (offset + centralSize > MAX_OFFSET) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'a zip without ZIP64 is at most 4 GiB');
  const end = Buffer.alloc(22);
  end.writeUInt32LE(END_SIGNATURE, 0);
  // disk numbers 0 and 0
  end.writeUInt16LE(entries.length, 8);
  end.writeUInt16LE(entries.length, 10);
  end.writeUInt32LE(centralSize, 12);
  end.writeUInt32LE(offset, 16);
  // comment length 0
  return Buffer.concat([...locals, ...centrals, end]);
}
