import { EngineInputError } from '../input-error';
import type { CodebookStructure } from '../structures/types';
import { packedLength } from './bit-packing';
import { HEADER_BYTES, HEADER_BYTES_V3, payloadLayout, STREAM_LENGTH_BYTES } from './container';
import { indexCodingOf } from './index-coding';

/** What the raw container's size needs of a codebook: its patch, mean bits, and its table size and structure (the index layout). */
export interface RawGeometry {
  patch: { width: number; height: number };
  size: number;
  meanBits: number;
  structure: CodebookStructure;
}

/**
 * A variable-length index stream's length depends on the image: the blocks' coded indices (their code lengths are
 * summed), or the byte length of the container the writer already wrote for this image without markers. The writer
 * stores such a stream raw whatever payload is asked for (FORMAT.md, "Version 3: index layouts"), so that container
 * is the raw one itself.
 */
export type VariableIndexStream = { indices: Uint32Array } | { writtenBytes: number };

/**
 * Bytes of the container a table-lookup decoder reads for a width × height image: the header and the raw payload,
 * without markers; exactly what `cellwright encode --payload raw` writes (FORMAT.md, "Coded image container"). A
 * full-search codebook writes version 1: ceil(B·b / 8) index bytes with b = ceil(log2 K). Every other structure writes
 * version 3 (a 72-byte header) in its own index layout (index-coding.ts): a balanced tree ceil(B·depth / 8) and residual
 * stages ceil(B·Σ b_s / 8) bytes, known from the geometry alone; Huffman codes and an unbalanced tree's paths a 4-byte
 * length and then their bits, which `stream` supplies. The mean codes follow, ceil(B·m / 8) bytes.
 */
export function rawContainerBytes(width: number, height: number, codebook: RawGeometry, stream?: VariableIndexStream): number {
  const blocksX = Math.ceil(width / codebook.patch.width);
  const blocksY = Math.ceil(height / codebook.patch.height);
  const blocks = blocksX * blocksY;
  const coding = indexCodingOf(codebook);
  if (coding.layout === 'fixed') return HEADER_BYTES + payloadLayout(blocksX, blocksY, coding.headerBits, codebook.meanBits, 0).length;
  const means = packedLength(blocks, codebook.meanBits);
  if (coding.bitsPerBlock !== null) return HEADER_BYTES_V3 + packedLength(blocks, coding.bitsPerBlock) + means;
  if (stream === undefined) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `the raw size of a ${coding.layout} index stream depends on the image: pass its indices or its written container`);
  if ('writtenBytes' in stream) return stream.writtenBytes;
  return HEADER_BYTES_V3 + STREAM_LENGTH_BYTES + Math.ceil(coding.streamBits(stream.indices) / 8) + means;
}

/**
 * Σ rawContainerBytes over a set of images whose containers, written without markers, total `writtenBytes` (what an
 * evaluation records): from the geometry for a fixed-length layout, the written containers themselves otherwise.
 */
export function rawSetBytes(images: readonly { width: number; height: number }[], codebook: RawGeometry, writtenBytes: number): number {
  if (indexCodingOf(codebook).bitsPerBlock === null) return writtenBytes;
  let bytes = 0;
  for (const image of images) bytes += rawContainerBytes(image.width, image.height, codebook);
  return bytes;
}
