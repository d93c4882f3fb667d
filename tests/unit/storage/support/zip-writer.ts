import { crc32, deflateRawSync } from 'node:zlib';

export interface ZipEntrySpec {
  /** Written byte for byte, so tests can build names a careful archiver would refuse to write. */
  name: string;
  data?: Buffer;
  method?: 'store' | 'deflate';
  /** Uncompressed size to declare instead of the true one (a lying header). */
  declaredSize?: number;
  /** Sets general purpose bit 0 without encrypting anything: readers must refuse to unpack it. */
  encryptedFlag?: boolean;
}

/**
 * A minimal zip writer following PKWARE's APPNOTE.TXT (6.3.x): local file headers (4.3.7), the central
 * directory (4.3.12) and the end of central directory record (4.3.16); UTF-8 names flagged by bit 11.
 * Test-only: it exists so archives with hostile names and sizes can be made on purpose.
 */
export function writeZip(entries: ZipEntrySpec[]): Buffer {
  const locals: Buffer[] = [];
  const centrals: Buffer[] = [];
  let offset = 0;
  for (const e of entries) {
    const name = Buffer.from(e.name, 'utf8');
    const data = e.data ?? Buffer.alloc(0);
    const method = e.method ?? (data.length > 0 ? 'deflate' : 'store');
    const body = method === 'deflate' ? deflateRawSync(data) : data;
    const flags = 0x0800 | (e.encryptedFlag ? 0x0001 : 0);
    const size = e.declaredSize ?? data.length;
    const crc = crc32(data) >>> 0;
    const local = Buffer.alloc(30);
    local.writeUInt32LE(0x04034b50, 0);
    local.writeUInt16LE(20, 4);
    local.writeUInt16LE(flags, 6);
    local.writeUInt16LE(method === 'deflate' ? 8 : 0, 8);
    local.writeUInt16LE(0, 10);
    local.writeUInt16LE(0x21, 12); // 1980-01-01
    local.writeUInt32LE(crc, 14);
    local.writeUInt32LE(body.length, 18);
    local.writeUInt32LE(size, 22);
    local.writeUInt16LE(name.length, 26);
    local.writeUInt16LE(0, 28);
    const central = Buffer.alloc(46);
    central.writeUInt32LE(0x02014b50, 0);
    central.writeUInt16LE(20, 4);
    central.writeUInt16LE(20, 6);
    central.writeUInt16LE(flags, 8);
    central.writeUInt16LE(method === 'deflate' ? 8 : 0, 10);
    central.writeUInt16LE(0, 12);
    central.writeUInt16LE(0x21, 14);
    central.writeUInt32LE(crc, 16);
    central.writeUInt32LE(body.length, 20);
    central.writeUInt32LE(size, 24);
    central.writeUInt16LE(name.length, 28);
    central.writeUInt32LE(offset, 42);
    locals.push(local, name, body);
    centrals.push(central, name);
    offset += local.length + name.length + body.length;
  }
  const directory = Buffer.concat(centrals);
  const end = Buffer.alloc(22);
  end.writeUInt32LE(0x06054b50, 0);
  end.writeUInt16LE(entries.length, 8);
  end.writeUInt16LE(entries.length, 10);
  end.writeUInt32LE(directory.length, 12);
  end.writeUInt32LE(offset, 16);
  return Buffer.concat([...locals, directory, end]);
}
