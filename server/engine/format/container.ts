import { brotliCompressSync, brotliDecompressSync, constants as zc, crc32, deflateRawSync, inflateRawSync } from 'node:zlib';
import { EngineInputError } from '../input-error';
import type { Codebook } from './codebook-schema';
import type { EncodedImage } from './codec';
import { packBits, packedLength, unpackBits } from './bit-packing';
import { blockGrid } from '../io/patches';
import { indexBits } from './rate-bits';

/** Layout is documented byte by byte in FORMAT.md; keep the two in step. */
export const CONTAINER_MAGIC = Uint8Array.from([0x43, 0x57, 0x56, 0x51]); // "CWVQ"
export const CONTAINER_VERSION = 1;
export const HEADER_BYTES = 68;
/** 2^28 blocks (over 10^9 pixels in 2×2 blocks): far beyond any image sharp decodes by default. */
const MAX_BLOCKS = 2 ** 28;

export type PayloadCoding = 'raw' | 'deflate' | 'brotli';
const CODING_IDS: Record<PayloadCoding, number> = { raw: 0, deflate: 1, brotli: 2 };
const CODINGS: PayloadCoding[] = ['raw', 'deflate', 'brotli'];

export interface ContainerHeader {
  version: number;
  coding: PayloadCoding;
  color: 'luma' | 'rgb';
  patchWidth: number;
  patchHeight: number;
  indexBits: number;
  meanBits: number;
  width: number;
  height: number;
  codebookSize: number;
  checksum: string; // hex
  payloadLength: number;
  payloadCrc32: number;
  storedLength: number;
}

function invalid(message: string): never {
  throw new EngineInputError('ENGINE_INVALID_CONTAINER', message);
}

function payloadFor(codebook: Codebook, encoded: EncodedImage): Uint8Array {
  const blocks = encoded.indices.length;
  const b = indexBits(codebook.size);
  const m = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  const indexBytes = packedLength(blocks, b);
  const out = new Uint8Array(indexBytes + packedLength(blocks, m));
  packBits(encoded.indices, b, out, 0);
  if (m > 0 && encoded.meanCodes) packBits(encoded.meanCodes, m, out, indexBytes);
  return out;
}

/**
 * Writes the container: header, then the bit-packed payload stored raw, deflated (RFC 1951) or brotli-coded (RFC 7932),
 * whichever is smallest; ties keep the earlier, cheaper-to-decode coding.
 */
export function writeContainer(codebook: Codebook, encoded: EncodedImage): Buffer {
  const patch = codebook.patch;
  if (!patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook has no patch geometry, so it cannot code images');
  const payload = payloadFor(codebook, encoded);
  const candidates: [PayloadCoding, Uint8Array][] = [
    ['raw', payload],
    ['deflate', deflateRawSync(payload, { level: 9 })],
    ['brotli', brotliCompressSync(payload, { params: { [zc.BROTLI_PARAM_QUALITY]: 11, [zc.BROTLI_PARAM_SIZE_HINT]: payload.length } })],
  ];
  const [coding, stored] = candidates.reduce((best, c) => (c[1].length < best[1].length ? c : best));
  const out = Buffer.alloc(HEADER_BYTES + stored.length);
  out.set(CONTAINER_MAGIC, 0);
  out[4] = CONTAINER_VERSION;
  out[5] = CODING_IDS[coding];
  out[6] = patch.color === 'rgb' ? 1 : 0;
  out[7] = patch.width;
  out[8] = patch.height;
  out[9] = indexBits(codebook.size);
  out[10] = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  out[11] = 0;
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
  if (version !== CONTAINER_VERSION) invalid(`unsupported container version ${version} (this build reads ${CONTAINER_VERSION})`);
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
    width: buf.readUInt32LE(12),
    height: buf.readUInt32LE(16),
    codebookSize: buf.readUInt32LE(20),
    checksum: buf.toString('hex', 24, 56),
    payloadLength: buf.readUInt32LE(56),
    payloadCrc32: buf.readUInt32LE(60),
    storedLength: buf.readUInt32LE(64),
  };
  if (buf[11] !== 0) invalid('reserved header byte 11 is not zero');
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
  const indexBytes = packedLength(blocks, header.indexBits);
  const expected = indexBytes + packedLength(blocks, header.meanBits);
  // Checked before inflating, and the inflater capped at that size, so a hostile payload cannot balloon in memory.
  if (header.payloadLength !== expected) {
    invalid(`header says the payload is ${header.payloadLength} bytes, ${header.width}×${header.height} in ${patch.width}×${patch.height} blocks needs ${expected}`);
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
  unpackBits(payload, 0, blocks, header.indexBits, indices);
  for (let i = 0; i < blocks; i += 1) {
    if (indices[i] >= codebook.size) invalid(`block ${i} refers to codeword ${indices[i]}, codebook has ${codebook.size}`);
  }
  let meanCodes: Uint8Array | null = null;
  if (header.meanBits > 0) {
    meanCodes = new Uint8Array(blocks);
    unpackBits(payload, indexBytes, blocks, header.meanBits, meanCodes);
  }
  return { width: header.width, height: header.height, blocksX, blocksY, indices, meanCodes, header };
}
