import { brotliCompressSync, brotliDecompressSync, constants as zc, crc32, deflateRawSync, inflateRawSync } from 'node:zlib';
import { EngineInputError } from '../input-error';
import type { Codebook } from './codebook-schema';
import type { EncodedImage } from './codec';
import { packBits, packedLength, unpackBits } from './bit-packing';
import { blockGrid } from '../io/patches';
import { indexBits } from './rate-bits';
import { MAX_RESYNC_ROWS } from './limits';

/** Layout is documented byte by byte in FORMAT.md; keep the two in step. */
export const CONTAINER_MAGIC = Uint8Array.from([0x43, 0x57, 0x56, 0x51]); // "CWVQ"
/**
 * The newest version this build reads and writes. Version 2 added resynchronisation markers (header byte 11 holds
 * their interval); a file without markers is still written as version 1, byte for byte as before, so every earlier
 * reader keeps reading it.
 */
export const CONTAINER_VERSION = 2;
export const HEADER_BYTES = 68;
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

function codedCandidates(payload: Uint8Array, choice: PayloadChoice): [PayloadCoding, Uint8Array][] {
  const packed: [PayloadCoding, Uint8Array][] = [
    ['deflate', deflateRawSync(payload, { level: 9 })],
    ['brotli', brotliCompressSync(payload, { params: { [zc.BROTLI_PARAM_QUALITY]: 11, [zc.BROTLI_PARAM_SIZE_HINT]: payload.length } })],
  ];
  if (choice === 'raw') return [['raw', payload]];
  return choice === 'packed' ? packed : [['raw', payload], ...packed];
}

/**
 * Writes the container: header, then the bit-packed payload stored as `options.payload` chooses (see PayloadChoice);
 * among several candidates the smallest wins, ties keeping the earlier, cheaper-to-decode coding.
 */
export function writeContainer(codebook: Codebook, encoded: EncodedImage, options: ContainerOptions = {}): Buffer {
  const patch = codebook.patch;
  if (!patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook has no patch geometry, so it cannot code images');
  const choice = options.payload ?? 'auto';
  const resyncRows = options.resyncRows ?? 0;
  if (!Number.isInteger(resyncRows) || resyncRows < 0 || resyncRows > MAX_RESYNC_ROWS) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `the marker interval must be an integer from 0 to ${MAX_RESYNC_ROWS} block rows, got ${resyncRows}`, 'resyncRows');
  }
  // A general-purpose coder hides the markers inside its own bit stream, where no decoder could find them.
  if (resyncRows > 0 && choice !== 'raw') {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'resynchronisation markers need the raw payload (a compressed payload hides them)', 'resyncRows');
  }
  const payload = payloadFor(codebook, encoded, resyncRows);
  const [coding, stored] = codedCandidates(payload, choice).reduce((best, c) => (c[1].length < best[1].length ? c : best));
  const out = Buffer.alloc(HEADER_BYTES + stored.length);
  out.set(CONTAINER_MAGIC, 0);
  out[4] = resyncRows > 0 ? 2 : 1;
  out[5] = CODING_IDS[coding];
  out[6] = patch.color === 'rgb' ? 1 : 0;
  out[7] = patch.width;
  out[8] = patch.height;
  out[9] = indexBits(codebook.size);
  out[10] = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  out[11] = resyncRows;
  out.writeUInt32LE(encoded.width, 12);
  out.writeUInt32LE(encoded.height, 16);
  out.writeUInt32LE(codebook.size, 20);
  out.write(codebook.checksum, 24, 32, 'hex');
  out.writeUInt32LE(payload.length, 56);
  out.writeUInt32LE(crc32(payload), 60);
  out.writeUInt32LE(stored.length, 64);
  out.set(stored, HEADER_BYTES);
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
  const coding = CODINGS[buf[5]];
  if (!coding) invalid(`unknown payload coding ${buf[5]}`);
  if (buf[6] > 1) invalid(`unknown colour mode ${buf[6]}`);
  const header: ContainerHeader = {
    version,
    coding,
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
  if (header.codebookSize < 1 || header.indexBits !== indexBits(header.codebookSize)) {
    invalid(`index bits ${header.indexBits} do not fit a codebook of ${header.codebookSize}`);
  }
  const actual = bytes.length - HEADER_BYTES;
  if (actual < header.storedLength) invalid(`truncated: payload should be ${header.storedLength} bytes, file holds ${actual}`);
  if (actual > header.storedLength) invalid(`${actual - header.storedLength} unexpected bytes after the payload`);
  return header;
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
  const { blocksX, blocksY } = blockGrid(header.width, header.height, patch);
  const blocks = blocksX * blocksY;
  if (blocks > MAX_BLOCKS) invalid(`image size ${header.width}×${header.height} is beyond what this reader accepts`);
  const { segments, length: expected } = payloadLayout(blocksX, blocksY, header.indexBits, header.meanBits, header.resyncRows);
  // Checked before inflating, and the inflater capped at that size, so a hostile payload cannot balloon in memory.
  if (header.payloadLength !== expected) {
    const markers = header.resyncRows > 0 ? ` with a marker every ${header.resyncRows} block rows` : '';
    invalid(`header says the payload is ${header.payloadLength} bytes, ${header.width}×${header.height} in ${patch.width}×${patch.height} blocks${markers} needs ${expected}`);
  }
  const stored = bytes.subarray(HEADER_BYTES);
  let payload: Uint8Array;
  try {
    const limit = { maxOutputLength: Math.max(1, expected) };
    payload = header.coding === 'raw' ? stored : header.coding === 'deflate' ? inflateRawSync(stored, limit) : brotliDecompressSync(stored, limit);
  } catch (error) {
    invalid(`corrupt ${header.coding} payload (${error instanceof Error ? error.message : String(error)})`);
  }
  if (payload.length !== expected) invalid(`payload decodes to ${payload.length} bytes, expected ${expected}`);
  if (crc32(payload) !== header.payloadCrc32) invalid('payload CRC-32 does not match (file is corrupt)');
  const indices = new Uint32Array(blocks);
  const meanCodes = header.meanBits > 0 ? new Uint8Array(blocks) : null;
  segments.forEach((s, n) => {
    const m = s.markerOffset;
    if (m >= 0 && (payload[m] !== RESYNC_MARKER_PREFIX[0] || payload[m + 1] !== RESYNC_MARKER_PREFIX[1] || payload[m + 2] + 256 * payload[m + 3] !== (n & 0xffff))) {
      invalid(`resynchronisation marker ${n} at payload byte ${m} is damaged`);
    }
    unpackBits(payload, s.indexOffset, s.blocks, header.indexBits, indices.subarray(s.firstBlock, s.firstBlock + s.blocks));
    if (meanCodes) unpackBits(payload, s.meanOffset, s.blocks, header.meanBits, meanCodes.subarray(s.firstBlock, s.firstBlock + s.blocks));
  });
  for (let i = 0; i < blocks; i += 1) {
    if (indices[i] >= codebook.size) invalid(`block ${i} refers to codeword ${indices[i]}, codebook has ${codebook.size}`);
  }
  return { width: header.width, height: header.height, blocksX, blocksY, indices, meanCodes, header };
}
