import { readFile } from 'node:fs/promises';

/**
 * Bytes after the end of the image are how polyglot files work (a PNG that is also a zip archive, a JPEG that is
 * also a script): decoders stop where the image ends and never see them. The store keeps originals byte for byte,
 * so such files are refused instead. Each format is walked by its own framing, from the published specifications,
 * to the byte where its structure ends; looking for an end marker from the back of the file is not enough, since
 * the appended data can end with one itself.
 *  - PNG (ISO/IEC 15948, W3C PNG spec): 8-byte signature, then length/type/data/CRC chunks up to IEND.
 *  - JPEG (ITU-T T.81 Annex B): marker segments with lengths, entropy-coded data after each SOS, up to the EOI that
 *    ends the image; 0x00/0xFF fill after it is tolerated.
 *  - GIF (GIF89a spec): header, logical screen descriptor, global colour table, then image descriptors and
 *    extensions with their sub-blocks, up to the trailer byte 0x3B.
 *  - WebP (RIFF container, RFC 9649): the RIFF size field covers the whole file (padded to even length).
 *  - TIFF (TIFF 6.0, and BigTIFF): offset-addressed, so the end is the furthest byte that the IFD chain, any
 *    sub-IFD, or any tag's values, strips, tiles and other offset/byte-count pairs point at.
 * AVIF is left to the decoder. A file cut short ends inside its own structure: no bytes follow it, and the decoder
 * reports the truncation with a better message.
 * Returns the number of unexplained bytes (0 when the file ends where its format says).
 */
export function trailingBytes(format: string, data: Buffer): number {
  switch (format) {
    case 'png':
      return pngTrailing(data);
    case 'jpeg':
      return jpegTrailing(data);
    case 'gif':
      return gifTrailing(data);
    case 'webp':
      return webpTrailing(data);
    case 'tiff':
      return tiffTrailing(data);
    default:
      return 0;
  }
}

function pngTrailing(data: Buffer): number {
  let offset = 8;
  while (offset + 12 <= data.length) {
    const length = data.readUInt32BE(offset);
    const type = data.toString('latin1', offset + 4, offset + 8);
    const end = offset + 12 + length;
    if (end > data.length) return 0; // truncated: the decoder reports that with a better message
    if (type === 'IEND') return data.length - end;
    offset = end;
  }
  return 0;
}

// ---- JPEG (ITU-T T.81) ----

const isRst = (marker: number) => marker >= 0xd0 && marker <= 0xd7;

/**
 * From `p`, the first byte of entropy-coded data, to the FF of the marker that ends it (B.1.1.5): inside the data
 * an FF is followed by a stuffed 00 or is an RSTn marker (B.2.4.1, E.1.4); any other marker ends the scan.
 * Fill FFs (B.1.1.2) may precede a marker. Null when the data runs to the end of the file.
 */
function endOfEntropyCodedData(data: Buffer, p: number): number | null {
  let at = p;
  for (;;) {
    at = data.indexOf(0xff, at);
    if (at < 0) return null;
    let q = at + 1;
    while (q < data.length && data[q] === 0xff) q++;
    if (q >= data.length) return null;
    if (data[q] === 0x00 || isRst(data[q])) {
      at = q + 1;
      continue;
    }
    return at;
  }
}

/** Offset just past the EOI that ends the image; null when the file ends first. */
function jpegEnd(data: Buffer): number | null {
  if (data.length < 4 || data[0] !== 0xff || data[1] !== 0xd8) return null;
  let p = 2;
  for (;;) {
    if (p >= data.length) return null;
    // Between segments only markers may appear: anything else is not part of the image (libjpeg skips such bytes
    // with a warning, which is how data can hide there).
    if (data[p] !== 0xff) return p;
    while (p < data.length && data[p] === 0xff) p++; // fill bytes before a marker (B.1.1.2)
    if (p >= data.length) return null;
    const marker = data[p++];
    if (marker === 0xd9) return p; // EOI
    if (isRst(marker) || marker === 0x01) continue; // RSTn and TEM stand alone, without a length (B.1.1.3)
    if (marker === 0x00 || marker === 0xd8) return p - 2; // a stuffed zero or a second SOI: not a segment
    if (p + 2 > data.length) return null;
    const length = data.readUInt16BE(p); // counts itself, not the marker (B.1.1.4)
    if (length < 2) return p - 2;
    p += length;
    if (marker === 0xda) {
      // SOS: its header is followed by entropy-coded data up to the next marker.
      if (p > data.length) return null;
      const next = endOfEntropyCodedData(data, p);
      if (next === null) return null;
      p = next;
    }
  }
}

/** Zero or FF fill after the end: some writers pad files (common practice); fill cannot carry a payload. */
function onlyFill(data: Buffer, from: number): boolean {
  for (let i = from; i < data.length; i++) if (data[i] !== 0x00 && data[i] !== 0xff) return false;
  return true;
}

function jpegTrailing(data: Buffer): number {
  const end = jpegEnd(data);
  if (end === null || onlyFill(data, end)) return 0;
  return data.length - end;
}

// ---- GIF (GIF89a) ----

/** Past a run of data sub-blocks (size byte, that many bytes, …, a zero-size terminator); null when the file ends first. */
function skipSubBlocks(data: Buffer, p: number): number | null {
  let at = p;
  while (at < data.length) {
    const size = data[at];
    at += 1 + size;
    if (size === 0) return at;
  }
  return null;
}

/** Bytes of a colour table whose packed field is `packed` (flag in bit 7, size 2^(N+1) entries in bits 0–2). */
const colourTableBytes = (packed: number) => (packed & 0x80 ? 3 * (1 << ((packed & 0x07) + 1)) : 0);

/** Offset just past the trailer 0x3B; null when the file ends first. */
function gifEnd(data: Buffer): number | null {
  // Header (6 bytes) and logical screen descriptor (7 bytes, packed field at offset 10), then the global colour table.
  if (data.length < 13) return null;
  let p: number | null = 13 + colourTableBytes(data[10]);
  for (;;) {
    if (p >= data.length) return null;
    const introducer = data[p];
    if (introducer === 0x3b) return p + 1; // trailer
    if (introducer === 0x2c) {
      // Image descriptor: 10 bytes (packed field last), local colour table, LZW minimum code size, image data sub-blocks.
      if (p + 10 > data.length) return null;
      p = skipSubBlocks(data, p + 10 + colourTableBytes(data[p + 9]) + 1);
    } else if (introducer === 0x21) {
      // Extension: introducer, label, then sub-blocks (graphic control, comment, plain text, application alike).
      p = skipSubBlocks(data, p + 2);
    } else {
      return p; // no block starts with this byte: the image data has ended and what follows is not part of it
    }
    if (p === null) return null;
  }
}

function gifTrailing(data: Buffer): number {
  const end = gifEnd(data);
  return end === null ? 0 : data.length - end;
}

// ---- WebP (RIFF) ----

function webpTrailing(data: Buffer): number {
  if (data.length < 12 || data.toString('latin1', 0, 4) !== 'RIFF') return 0;
  const size = data.readUInt32LE(4) + 8;
  const padded = size + (size % 2);
  return data.length > padded ? data.length - padded : 0;
}

// ---- TIFF 6.0 and BigTIFF ----

/** Bytes per value of each field type (TIFF 6.0 section 2; LONG8, SLONG8 and IFD8 from BigTIFF); unknown types are skipped. */
const typeBytes: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4, 16: 8, 17: 8, 18: 8 };
const IFD_TYPES = new Set([13, 18]);

// Tags whose values are offsets, paired with the tag holding each offset's byte count (TIFF 6.0 sections 8, 15, 22).
const OFFSET_PAIRS: [offsets: number, counts: number][] = [
  [273, 279], // StripOffsets, StripByteCounts
  [324, 325], // TileOffsets, TileByteCounts
  [288, 289], // FreeOffsets, FreeByteCounts
  [513, 514], // JPEGInterchangeFormat, JPEGInterchangeFormatLength (old-style JPEG, section 22)
];
// Tags whose values are offsets of further IFDs: SubIFDs (Adobe TIFF Technical Note 1), and the Exif, GPS and
// Interoperability IFDs (CIPA DC-008, Exif 2.3).
const IFD_POINTERS = new Set([330, 34665, 34853, 40965]);
// Old-style JPEG tables (TIFF 6.0 section 22): offsets of 64-byte quantization tables and of Huffman tables
// (16 code-length counts, then as many values as they add up to).
const JPEG_QTABLES = 519;
const JPEG_HUFFMAN_TABLES = new Set([520, 521]);

// A file of a few MB could otherwise point thousands of IFDs at the same entries; a real file has a handful.
const MAX_IFDS = 4096;
const MAX_VALUES_READ = 1 << 22;

/** Offset just past the furthest byte that the file's structure refers to; null when it refers past the end of the file. */
function tiffEnd(data: Buffer): number | null {
  if (data.length < 8) return null;
  const little = data[0] === 0x49 && data[1] === 0x49; // "II"
  if (!little && !(data[0] === 0x4d && data[1] === 0x4d)) return null; // "MM"
  const u16 = (o: number) => (little ? data.readUInt16LE(o) : data.readUInt16BE(o));
  const u32 = (o: number) => (little ? data.readUInt32LE(o) : data.readUInt32BE(o));
  const u64 = (o: number) => Number(little ? data.readBigUInt64LE(o) : data.readBigUInt64BE(o));
  const version = u16(2);
  const big = version === 43;
  if (!big && version !== 42) return null;
  if (big && data.length < 16) return null;
  const offsetBytes = big ? 8 : 4;
  const readOffset = big ? u64 : u32;
  const readValue = (type: number, at: number): number => {
    const size = typeBytes[type];
    return size === 1 ? data[at] : size === 2 ? u16(at) : size === 4 ? u32(at) : u64(at);
  };

  let end = big ? 16 : 8;
  // A reference past the end of the file means the file was cut short: nothing follows its structure then.
  let cutShort = false;
  const reach = (from: number, bytes: number) => {
    if (bytes <= 0) return;
    if (from + bytes > data.length) cutShort = true;
    else end = Math.max(end, from + bytes);
  };
  let budget = MAX_VALUES_READ;
  const pending = [readOffset(big ? 8 : 4)];
  const seen = new Set<number>();

  while (pending.length > 0 && seen.size < MAX_IFDS && budget > 0) {
    const ifd = pending.pop()!;
    if (ifd === 0 || seen.has(ifd)) continue;
    if (ifd + (big ? 8 : 2) > data.length) {
      cutShort = true;
      continue;
    }
    seen.add(ifd);
    const count = big ? u64(ifd) : u16(ifd);
    const first = ifd + (big ? 8 : 2);
    const entryBytes = big ? 20 : 12;
    const entries = Math.min(count, Math.floor((data.length - first) / entryBytes));
    reach(ifd, first - ifd + count * entryBytes + offsetBytes);
    const values = new Map<number, number[]>();
    for (let i = 0; i < entries && budget > 0; i++) {
      const at = first + i * entryBytes;
      const tag = u16(at);
      const type = u16(at + 2);
      const n = big ? u64(at + 4) : u32(at + 4);
      const size = typeBytes[type];
      if (size === undefined) continue;
      const field = at + 4 + offsetBytes;
      // Values that fit in the entry's value field are stored there; larger ones at the offset it holds.
      const where = size * n <= offsetBytes ? field : readOffset(field);
      if (where !== field) reach(where, size * n);
      const wanted = IFD_TYPES.has(type) || IFD_POINTERS.has(tag) || tag === JPEG_QTABLES || JPEG_HUFFMAN_TABLES.has(tag) || OFFSET_PAIRS.some(([o, c]) => tag === o || tag === c);
      if (!wanted) continue;
      const readable = Math.max(0, Math.min(n, Math.floor((data.length - where) / size), budget));
      budget -= readable;
      const list: number[] = [];
      for (let k = 0; k < readable; k++) list.push(readValue(type, where + k * size));
      values.set(tag, list);
      if (IFD_TYPES.has(type) || IFD_POINTERS.has(tag)) for (const o of list) pending.push(o);
    }
    for (const [offsetsTag, countsTag] of OFFSET_PAIRS) {
      const offsets = values.get(offsetsTag) ?? [];
      const counts = values.get(countsTag) ?? [];
      // An offset without its byte count is only known to start there.
      offsets.forEach((o, k) => reach(o, Math.max(1, counts[k] ?? 0)));
    }
    for (const o of values.get(JPEG_QTABLES) ?? []) reach(o, 64);
    for (const tag of JPEG_HUFFMAN_TABLES) {
      for (const o of values.get(tag) ?? []) {
        let lengths = 0;
        for (let k = 0; k < 16 && o + k < data.length; k++) lengths += data[o + k];
        reach(o, 16 + lengths);
      }
    }
    const next = first + count * entryBytes;
    if (next + offsetBytes <= data.length) pending.push(readOffset(next));
  }
  return cutShort ? null : end;
}

function tiffTrailing(data: Buffer): number {
  const end = tiffEnd(data);
  if (end === null) return 0;
  // TIFF 6.0 keeps values on word boundaries, so a writer may leave one pad byte after the last of them.
  const extra = data.length - end;
  return extra === 1 && data[end] === 0 ? 0 : extra;
}

/**
 * trailingBytes for a file on disk. The walkers above take the bytes in memory, so the file is read whole —
 * at most the per-file upload limit, and the upload service inspects only a few files at once.
 */
export async function trailingBytesInFile(format: string, file: string): Promise<number> {
  return trailingBytes(format, await readFile(file));
}
