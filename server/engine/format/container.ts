import { brotliCompressSync, brotliDecompressSync, constants as zc, crc32, deflateRawSync, inflateRawSync } from 'node:zlib';
import { EngineInputError } from '../input-error';
import type { Codebook } from './codebook-schema';
import type { EncodedImage } from './codec';
import { packBits, packedLength, unpackBits } from './bit-packing';
import { blockGrid } from '../io/patches';
import { indexBits } from './rate-bits';
import { INDEX_LAYOUTS, indexCodingOf, type IndexCoding, type IndexLayout } from './index-coding';
import { checkCodedIndices } from './codec';
import { MAX_RESYNC_ROWS, MAX_TREE_DEPTH } from './limits';

/** Layout is documented byte by byte in FORMAT.md; keep the two in step. */
export const CONTAINER_MAGIC = Uint8Array.from([0x43, 0x57, 0x56, 0x51]); // "CWVQ"
/**
 * The newest version this build reads and writes. Version 2 added resynchronisation markers (header byte 11 holds
 * their interval); version 3 added the index layouts of the codebook structures (a 72-byte header whose byte 68
 * names the layout). A full-search codebook's file is still written as version 1 without markers and version 2 with
 * them, byte for byte as before, so every earlier reader keeps reading it; other structures write version 3.
 */
export const CONTAINER_VERSION = 3;
/** Header length of versions 1 and 2. */
export const HEADER_BYTES = 68;
/** Header length of version 3: the version 2 fields, then layout, stages and two reserved zero bytes. */
export const HEADER_BYTES_V3 = 72;
export const headerBytesOf = (version: number): number => (version >= 3 ? HEADER_BYTES_V3 : HEADER_BYTES);
/** A variable-length index stream is preceded in each segment by its byte length, uint32 little-endian. */
export const STREAM_LENGTH_BYTES = 4;
/** 2^28 blocks (over 10^9 pixels in 2×2 blocks): far beyond any image sharp decodes by default. */
export const MAX_BLOCKS = 2 ** 28;

/** A resynchronisation marker: `FF 52` ("R" after an all-ones byte), then the number of the segment that follows (uint16 LE, mod 65536). */
export const RESYNC_MARKER_PREFIX = [0xff, 0x52] as const;
export const RESYNC_MARKER_BYTES = 4;
// The marker interval's limit (one header byte) lives with the format's other limits, which the contracts read
// without this file's node:zlib.
export { MAX_RESYNC_ROWS };

export type PayloadCoding = 'raw' | 'deflate' | 'brotli';
const CODING_IDS: Record<PayloadCoding, number> = { raw: 0, deflate: 1, brotli: 2 };
const CODINGS: PayloadCoding[] = ['raw', 'deflate', 'brotli'];

/**
 * What the writer stores: `raw` the fixed-rate payload as it is (coding 0, what a table-lookup decoder reads);
 * `packed` the payload further packed by a general-purpose coder, deflate or brotli, whichever is smaller (even when
 * that is larger than raw); `auto` the smallest of the three (ties to the lower coding number).
 */
export const PAYLOAD_CHOICES = ['raw', 'packed', 'auto'] as const;
export type PayloadChoice = (typeof PAYLOAD_CHOICES)[number];

export interface ContainerOptions {
  /** default `auto` */
  payload?: PayloadChoice;
  /** a resynchronisation marker before every segment of this many block rows but the first; 0 (default) for none; raw only */
  resyncRows?: number;
}

export interface ContainerHeader {
  version: number;
  coding: PayloadCoding;
  /** How the payload holds the indices (version 3 byte 68; `fixed` in versions 1 and 2). */
  layout: IndexLayout;
  /** Residual stages (version 3 byte 69); 0 for other layouts. */
  stages: number;
  /** Header bytes: 68 (versions 1, 2) or 72 (version 3). */
  headerBytes: number;
  color: 'luma' | 'rgb';
  patchWidth: number;
  patchHeight: number;
  indexBits: number;
  meanBits: number;
  /** block rows per segment between resynchronisation markers; 0 without markers (always 0 in version 1) */
  resyncRows: number;
  width: number;
  height: number;
  codebookSize: number;
  checksum: string; // hex
  payloadLength: number;
  payloadCrc32: number;
  storedLength: number;
}

/** One run of block rows in the payload: its blocks' indices, then their mean codes, each stream zero-padded to a byte. */
export interface PayloadSegment {
  firstBlock: number;
  blocks: number;
  /** byte offset of the marker in front of it (−1 for the first segment, which has none) */
  markerOffset: number;
  indexOffset: number;
  meanOffset: number;
  end: number;
}

/**
 * The byte layout of the payload before coding (FORMAT.md, "Payload before coding"): one segment per `resyncRows`
 * block rows (the whole image when 0), a marker in front of every segment but the first.
 */
export function payloadLayout(blocksX: number, blocksY: number, indexBitCount: number, meanBits: number, resyncRows: number): { segments: PayloadSegment[]; length: number } {
  const rowsPer = resyncRows > 0 ? resyncRows : Math.max(1, blocksY);
  const segments: PayloadSegment[] = [];
  let pos = 0;
  for (let row = 0; row < blocksY; row += rowsPer) {
    const markerOffset = segments.length > 0 ? pos : -1;
    if (markerOffset >= 0) pos += RESYNC_MARKER_BYTES;
    const blocks = Math.min(rowsPer, blocksY - row) * blocksX;
    const indexOffset = pos;
    const meanOffset = indexOffset + packedLength(blocks, indexBitCount);
    pos = meanOffset + packedLength(blocks, meanBits);
    segments.push({ firstBlock: row * blocksX, blocks, markerOffset, indexOffset, meanOffset, end: pos });
  }
  return { segments, length: pos };
}

function invalid(message: string): never {
  throw new EngineInputError('ENGINE_INVALID_CONTAINER', message);
}

function payloadFor(codebook: Codebook, encoded: EncodedImage, resyncRows: number): Uint8Array {
  const b = indexBits(codebook.size);
  const m = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  const { segments, length } = payloadLayout(encoded.blocksX, encoded.blocksY, b, m, resyncRows);
  const out = new Uint8Array(length);
  segments.forEach((s, n) => {
    if (s.markerOffset >= 0) out.set([...RESYNC_MARKER_PREFIX, n & 0xff, (n >> 8) & 0xff], s.markerOffset);
    const stop = s.firstBlock + s.blocks;
    packBits(encoded.indices.subarray(s.firstBlock, stop), b, out, s.indexOffset);
    if (m > 0 && encoded.meanCodes) packBits(encoded.meanCodes.subarray(s.firstBlock, stop), m, out, s.meanOffset);
  });
  return out;
}

/**
 * Levels of the general-purpose coders, chosen for speed: measured with K = 256, 8×8 luma on the eight test
 * photographs, the smaller of deflate 6 and brotli 6 per payload is 3.9 % larger in total than the smaller of
 * deflate 9 and brotli 11, and 8 % larger on the bench's 4096×4096 image, where it takes about 1/70 of the time
 * (brotli 11 alone took about 0.3 s there, more than the whole search).
 */
export const DEFLATE_LEVEL = 6;
export const BROTLI_QUALITY = 6;

function codedCandidates(payload: Uint8Array, choice: PayloadChoice): [PayloadCoding, Uint8Array][] {
  if (choice === 'raw') return [['raw', payload]];
  const packed: [PayloadCoding, Uint8Array][] = [
    ['deflate', deflateRawSync(payload, { level: DEFLATE_LEVEL })],
    ['brotli', brotliCompressSync(payload, { params: { [zc.BROTLI_PARAM_QUALITY]: BROTLI_QUALITY, [zc.BROTLI_PARAM_SIZE_HINT]: payload.length } })],
  ];
  return choice === 'packed' ? packed : [['raw', payload], ...packed];
}

/**
 * Writes the container: header, then the bit-packed payload stored as `options.payload` chooses (see PayloadChoice);
 * among several candidates the smallest wins, ties keeping the earlier, cheaper-to-decode coding.
 */
export function writeContainer(codebook: Codebook, encoded: EncodedImage, options: ContainerOptions = {}): Buffer {
  if (!codebook.patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook has no patch geometry, so it cannot code images');
  const choice = options.payload ?? 'auto';
  const resyncRows = options.resyncRows ?? 0;
  if (!Number.isInteger(resyncRows) || resyncRows < 0 || resyncRows > MAX_RESYNC_ROWS) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `the marker interval must be an integer from 0 to ${MAX_RESYNC_ROWS} block rows, got ${resyncRows}`, 'resyncRows');
  }
  // A general-purpose coder hides the markers inside its own bit stream, where no decoder could find them.
  if (resyncRows > 0 && choice !== 'raw') {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'resynchronisation markers need the raw payload (a compressed payload hides them)', 'resyncRows');
  }
  const indexCoding = indexCodingOf(codebook);
  if (indexCoding.layout !== 'fixed') return writeContainerV3(codebook, encoded, indexCoding, choice, resyncRows);
  const payload = payloadFor(codebook, encoded, resyncRows);
  const [coding, stored] = codedCandidates(payload, choice).reduce((best, c) => (c[1].length < best[1].length ? c : best));
  const out = Buffer.alloc(HEADER_BYTES + stored.length);
  writeHeaderFields(out, codebook, encoded, resyncRows > 0 ? 2 : 1, coding, indexBits(codebook.size), resyncRows, payload, stored);
  return out;
}

/** Bytes 0..67, the fields every version shares (FORMAT.md, "Header"), and the stored payload after the header. */
function writeHeaderFields(
  out: Buffer, codebook: Codebook, encoded: EncodedImage, version: number, coding: PayloadCoding, headerBits: number, resyncRows: number, payload: Uint8Array, stored: Uint8Array,
): void {
  const patch = codebook.patch!;
  out.set(CONTAINER_MAGIC, 0);
  out[4] = version;
  out[5] = CODING_IDS[coding];
  out[6] = patch.color === 'rgb' ? 1 : 0;
  out[7] = patch.width;
  out[8] = patch.height;
  out[9] = headerBits;
  out[10] = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  out[11] = resyncRows;
  out.writeUInt32LE(encoded.width, 12);
  out.writeUInt32LE(encoded.height, 16);
  out.writeUInt32LE(codebook.size, 20);
  out.write(codebook.checksum, 24, 32, 'hex');
  out.writeUInt32LE(payload.length, 56);
  out.writeUInt32LE(crc32(payload), 60);
  out.writeUInt32LE(stored.length, 64);
  out.set(stored, headerBytesOf(version));
}

/**
 * The version 3 payload before coding: per segment (as in version 2) an optional marker, the index stream in the
 * codebook's layout (preceded by its byte length when variable-length), then the mean codes.
 */
function payloadV3(codebook: Codebook, encoded: EncodedImage, coding: IndexCoding, resyncRows: number): Uint8Array {
  const m = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  const rowsPer = resyncRows > 0 ? resyncRows : Math.max(1, encoded.blocksY);
  const parts: Uint8Array[] = [];
  let n = 0;
  for (let row = 0; row < encoded.blocksY; row += rowsPer, n += 1) {
    if (n > 0) parts.push(Uint8Array.from([...RESYNC_MARKER_PREFIX, n & 0xff, (n >> 8) & 0xff]));
    const first = row * encoded.blocksX;
    const stop = Math.min(encoded.blocksY, row + rowsPer) * encoded.blocksX;
    const stream = coding.write(encoded.indices.subarray(first * coding.perBlock, stop * coding.perBlock));
    if (coding.bitsPerBlock === null) {
      const length = new Uint8Array(STREAM_LENGTH_BYTES);
      new DataView(length.buffer).setUint32(0, stream.length, true);
      parts.push(length);
    }
    parts.push(stream);
    const means = new Uint8Array(packedLength(stop - first, m));
    if (m > 0 && encoded.meanCodes) packBits(encoded.meanCodes.subarray(first, stop), m, means);
    parts.push(means);
  }
  return Buffer.concat(parts);
}

/**
 * Version 3. A variable-length (entropy-coded) index stream is stored raw: its length is the rate the code gives, and
 * a general-purpose coder on top would blur that; `auto` stores it raw and `packed` is refused.
 */
function writeContainerV3(codebook: Codebook, encoded: EncodedImage, coding: IndexCoding, choice: PayloadChoice, resyncRows: number): Buffer {
  if (coding.bitsPerBlock === null && choice === 'packed') {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `a ${coding.layout} index stream is already entropy-coded and is stored raw; use --payload raw or auto`, 'payload');
  }
  if (encoded.indices.length !== encoded.blocksX * encoded.blocksY * coding.perBlock) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `coded image has ${encoded.indices.length} indices, its geometry needs ${encoded.blocksX * encoded.blocksY * coding.perBlock}`);
  }
  checkCodedIndices(codebook, encoded.indices, (message) => {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', message);
  });
  const payload = payloadV3(codebook, encoded, coding, resyncRows);
  const candidates = coding.bitsPerBlock === null ? codedCandidates(payload, 'raw') : codedCandidates(payload, choice);
  const [pc, stored] = candidates.reduce((best, c) => (c[1].length < best[1].length ? c : best));
  const out = Buffer.alloc(HEADER_BYTES_V3 + stored.length);
  writeHeaderFields(out, codebook, encoded, 3, pc, coding.headerBits, resyncRows, payload, stored);
  out[68] = INDEX_LAYOUTS.indexOf(coding.layout);
  out[69] = coding.stages;
  return out;
}

/** Reads and checks the header alone (no codebook needed): magic, version, field ranges and the stored length. */
export function readContainerHeader(bytes: Uint8Array): ContainerHeader {
  if (bytes.length < CONTAINER_MAGIC.length || !CONTAINER_MAGIC.every((b, i) => bytes[i] === b)) {
    invalid('not a Cellwright coded image (wrong magic bytes)');
  }
  if (bytes.length < HEADER_BYTES) invalid(`truncated: ${bytes.length} bytes, the header alone is ${HEADER_BYTES}`);
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const version = buf[4];
  if (version < 1 || version > CONTAINER_VERSION) invalid(`unsupported container version ${version} (this build reads 1 to ${CONTAINER_VERSION})`);
  const headerBytes = headerBytesOf(version);
  if (bytes.length < headerBytes) invalid(`truncated: ${bytes.length} bytes, a version ${version} header alone is ${headerBytes}`);
  const coding = CODINGS[buf[5]];
  if (!coding) invalid(`unknown payload coding ${buf[5]}`);
  if (buf[6] > 1) invalid(`unknown colour mode ${buf[6]}`);
  const layout = version >= 3 ? INDEX_LAYOUTS[buf[68]] : 'fixed';
  if (!layout) invalid(`unknown index layout ${buf[68]}`);
  const header: ContainerHeader = {
    version,
    coding,
    layout,
    stages: version >= 3 ? buf[69] : 0,
    headerBytes,
    color: buf[6] === 1 ? 'rgb' : 'luma',
    patchWidth: buf[7],
    patchHeight: buf[8],
    indexBits: buf[9],
    meanBits: buf[10],
    resyncRows: version >= 2 ? buf[11] : 0,
    width: buf.readUInt32LE(12),
    height: buf.readUInt32LE(16),
    codebookSize: buf.readUInt32LE(20),
    checksum: buf.toString('hex', 24, 56),
    payloadLength: buf.readUInt32LE(56),
    payloadCrc32: buf.readUInt32LE(60),
    storedLength: buf.readUInt32LE(64),
  };
  if (version === 1 && buf[11] !== 0) invalid('reserved header byte 11 is not zero');
  if (header.resyncRows > 0 && header.coding !== 'raw') invalid(`resynchronisation markers with a ${header.coding} payload`);
  for (const [name, v] of [['patch width', header.patchWidth], ['patch height', header.patchHeight]] as const) {
    if (v < 2 || v > 16) invalid(`${name} ${v} is outside 2..16`);
  }
  if (header.meanBits > 8) invalid(`mean bits ${header.meanBits} is outside 0..8`);
  if (header.width < 1 || header.height < 1) invalid(`image size ${header.width}×${header.height} is empty`);
  if (header.codebookSize < 1) invalid('the codebook size is 0');
  if (version >= 3) {
    if (layout === 'fixed') invalid('version 3 with the fixed layout (a fixed-length file is written as version 1 or 2)');
    if (buf[70] !== 0 || buf[71] !== 0) invalid('reserved header bytes 70 and 71 are not zero');
    if ((layout === 'residual-stages') !== (header.stages > 0)) invalid(`${header.stages} stages with the ${layout} layout`);
    if (header.indexBits > MAX_TREE_DEPTH) invalid(`index bits ${header.indexBits} is above ${MAX_TREE_DEPTH}`);
  } else if (header.indexBits !== indexBits(header.codebookSize)) {
    invalid(`index bits ${header.indexBits} do not fit a codebook of ${header.codebookSize}`);
  }
  const actual = bytes.length - headerBytes;
  if (actual < header.storedLength) invalid(`truncated: payload should be ${header.storedLength} bytes, file holds ${actual}`);
  if (actual > header.storedLength) invalid(`${actual - header.storedLength} unexpected bytes after the payload`);
  return header;
}

/** The stored payload, decoded (raw, inflated or brotli-decompressed) into at most `limit` bytes and checked by length and CRC-32. */
function payloadOf(header: ContainerHeader, bytes: Uint8Array, limit: number, exact: boolean): Uint8Array {
  const stored = bytes.subarray(header.headerBytes);
  let payload: Uint8Array;
  try {
    const max = { maxOutputLength: Math.max(1, limit) };
    payload = header.coding === 'raw' ? stored : header.coding === 'deflate' ? inflateRawSync(stored, max) : brotliDecompressSync(stored, max);
  } catch (error) {
    invalid(`corrupt ${header.coding} payload (${error instanceof Error ? error.message : String(error)})`);
  }
  if (payload.length !== header.payloadLength || (exact && payload.length !== limit)) invalid(`payload decodes to ${payload.length} bytes, expected ${exact ? limit : header.payloadLength}`);
  if (crc32(payload) !== header.payloadCrc32) invalid('payload CRC-32 does not match (file is corrupt)');
  return payload;
}

function checkMarker(payload: Uint8Array, at: number, n: number): void {
  if (at + RESYNC_MARKER_BYTES > payload.length || payload[at] !== RESYNC_MARKER_PREFIX[0] || payload[at + 1] !== RESYNC_MARKER_PREFIX[1] || payload[at + 2] + 256 * payload[at + 3] !== (n & 0xffff)) {
    invalid(`resynchronisation marker ${n} at payload byte ${at} is damaged`);
  }
}

/**
 * Reads a container coded with `codebook`. Rejects foreign or truncated files, a different codebook (by checksum),
 * a geometry the codebook cannot decode, and any payload whose length or CRC-32 does not check out.
 */
export function readContainer(codebook: Codebook, bytes: Uint8Array): EncodedImage & { header: ContainerHeader } {
  const header = readContainerHeader(bytes);
  if (header.checksum !== codebook.checksum) {
    throw new EngineInputError(
      'ENGINE_CHECKSUM_MISMATCH',
      `coded with a different codebook (checksum ${header.checksum.slice(0, 12)}…, this codebook is ${codebook.checksum.slice(0, 12)}…)`,
      'checksum',
    );
  }
  const patch = codebook.patch;
  const meanBits = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  if (
    !patch ||
    patch.width !== header.patchWidth ||
    patch.height !== header.patchHeight ||
    patch.color !== header.color ||
    meanBits !== header.meanBits ||
    codebook.size !== header.codebookSize
  ) {
    invalid('header geometry (patch, colour, mean bits or codebook size) does not match the codebook');
  }
  const coding = indexCodingOf(codebook);
  if (coding.layout !== header.layout || coding.headerBits !== header.indexBits || coding.stages !== header.stages) {
    invalid(`the file's index layout (${header.layout}, ${header.indexBits} bits${header.stages ? `, ${header.stages} stages` : ''}) is not this ${codebook.structure.kind} codebook's (${coding.layout}, ${coding.headerBits} bits${coding.stages ? `, ${coding.stages} stages` : ''})`);
  }
  const { blocksX, blocksY } = blockGrid(header.width, header.height, patch);
  const blocks = blocksX * blocksY;
  if (blocks > MAX_BLOCKS) invalid(`image size ${header.width}×${header.height} is beyond what this reader accepts`);
  const decoded = header.version >= 3 ? readPayloadV3(header, bytes, coding, blocksX, blocksY) : readPayloadFixed(header, bytes, blocksX, blocksY);
  checkCodedIndices(codebook, decoded.indices, invalid);
  return { width: header.width, height: header.height, blocksX, blocksY, ...decoded, header };
}

/** Versions 1 and 2: fixed-length indices, the payload length known from the header before anything is inflated. */
function readPayloadFixed(header: ContainerHeader, bytes: Uint8Array, blocksX: number, blocksY: number): { indices: Uint32Array; meanCodes: Uint8Array | null } {
  const blocks = blocksX * blocksY;
  const { segments, length: expected } = payloadLayout(blocksX, blocksY, header.indexBits, header.meanBits, header.resyncRows);
  // Checked before inflating, and the inflater capped at that size, so a hostile payload cannot balloon in memory.
  if (header.payloadLength !== expected) {
    const markers = header.resyncRows > 0 ? ` with a marker every ${header.resyncRows} block rows` : '';
    invalid(`header says the payload is ${header.payloadLength} bytes, ${header.width}×${header.height} in ${header.patchWidth}×${header.patchHeight} blocks${markers} needs ${expected}`);
  }
  const payload = payloadOf(header, bytes, expected, true);
  const indices = new Uint32Array(blocks);
  const meanCodes = header.meanBits > 0 ? new Uint8Array(blocks) : null;
  segments.forEach((s, n) => {
    if (s.markerOffset >= 0) checkMarker(payload, s.markerOffset, n);
    unpackBits(payload, s.indexOffset, s.blocks, header.indexBits, indices.subarray(s.firstBlock, s.firstBlock + s.blocks));
    if (meanCodes) unpackBits(payload, s.meanOffset, s.blocks, header.meanBits, meanCodes.subarray(s.firstBlock, s.firstBlock + s.blocks));
  });
  return { indices, meanCodes };
}

/**
 * Version 3: segments as in version 2, the index stream in the codebook's layout. A variable-length stream's size is
 * bounded by the longest code before anything is inflated, and each segment's length prefix is checked against the
 * bytes that remain and against that bound.
 */
function readPayloadV3(header: ContainerHeader, bytes: Uint8Array, coding: IndexCoding, blocksX: number, blocksY: number): { indices: Uint32Array; meanCodes: Uint8Array | null } {
  const blocks = blocksX * blocksY;
  const m = header.meanBits;
  const rowsPer = header.resyncRows > 0 ? header.resyncRows : Math.max(1, blocksY);
  const variable = coding.bitsPerBlock === null;
  const segments: { first: number; count: number }[] = [];
  for (let row = 0; row < blocksY; row += rowsPer) segments.push({ first: row * blocksX, count: (Math.min(blocksY, row + rowsPer) - row) * blocksX });
  let bound = 0;
  for (const [n, sg] of segments.entries()) {
    bound += (n > 0 ? RESYNC_MARKER_BYTES : 0) + (variable ? STREAM_LENGTH_BYTES : 0) + packedLength(sg.count, coding.maxBitsPerBlock) + packedLength(sg.count, m);
  }
  if (variable ? header.payloadLength > bound : header.payloadLength !== bound) {
    invalid(`header says the payload is ${header.payloadLength} bytes, ${header.width}×${header.height} in ${header.patchWidth}×${header.patchHeight} blocks needs ${variable ? `at most ${bound}` : bound}`);
  }
  const payload = payloadOf(header, bytes, variable ? header.payloadLength : bound, !variable);
  const view = new DataView(payload.buffer, payload.byteOffset, payload.byteLength);
  const indices = new Uint32Array(blocks * coding.perBlock);
  const meanCodes = m > 0 ? new Uint8Array(blocks) : null;
  let pos = 0;
  for (const [n, sg] of segments.entries()) {
    if (n > 0) {
      checkMarker(payload, pos, n);
      pos += RESYNC_MARKER_BYTES;
    }
    let length = packedLength(sg.count, coding.bitsPerBlock ?? 0);
    if (variable) {
      if (pos + STREAM_LENGTH_BYTES > payload.length) invalid(`the payload ends before segment ${n}'s stream length`);
      length = view.getUint32(pos, true);
      pos += STREAM_LENGTH_BYTES;
      if (length > packedLength(sg.count, coding.maxBitsPerBlock)) invalid(`segment ${n}'s index stream of ${length} bytes is longer than ${sg.count} blocks of at most ${coding.maxBitsPerBlock} bits`);
    }
    const meansLength = packedLength(sg.count, m);
    if (pos + length + meansLength > payload.length) invalid(`segment ${n} runs past the end of the payload`);
    indices.set(coding.read(payload.subarray(pos, pos + length), sg.count), sg.first * coding.perBlock);
    pos += length;
    if (meanCodes) unpackBits(payload, pos, sg.count, m, meanCodes.subarray(sg.first, sg.first + sg.count));
    pos += meansLength;
  }
  if (pos !== payload.length) invalid(`${payload.length - pos} unexpected bytes after the last segment`);
  return { indices, meanCodes };
}
