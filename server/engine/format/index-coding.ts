/**
 * How a container's payload holds each block's indices, per codebook structure (FORMAT.md, "Index layouts"): the
 * layout number in the version 3 header, the header's index-bits byte, and one stream coder per layout. Every code
 * is written most significant bit first, bytes filled from their most significant bit, the stream zero-padded to a byte.
 */
import { BitReader, BitWriter, canonicalCode, HuffmanDecoder, type CanonicalCode } from '../core/huffman';
import { EngineInputError } from '../input-error';
import type { Codebook } from './codebook-schema';
import { packBits, packedLength, unpackBits } from './bit-packing';
import { indexBits } from './rate-bits';
import { isTreeProblem, stageOffsets, treeShape } from './structure-check';

/** Layout numbers as header byte 68 of a version 3 container holds them. */
export const INDEX_LAYOUTS = ['fixed', 'huffman', 'tree-path', 'residual-stages'] as const;
export type IndexLayout = (typeof INDEX_LAYOUTS)[number];

export interface IndexCoding {
  layout: IndexLayout;
  /** Header byte 9: fixed ceil(log2 K); huffman the longest code length; tree-path the tree's depth; residual Σ bits[s]. */
  headerBits: number;
  /** Header byte 69: stages S of a residual codebook, else 0. */
  stages: number;
  /** Bits every block takes when the layout is fixed-length (its stream length follows from the block count), else null. */
  bitsPerBlock: number | null;
  /** The most bits one block can take (bounds a variable-length stream). */
  maxBitsPerBlock: number;
  /** Table indices per block in an EncodedImage (S for residual, else 1). */
  perBlock: number;
  /** Bits the stream of these indices (blocks × perBlock entries) takes before its zero padding: what `write` writes. */
  streamBits(indices: Uint32Array): number;
  /** Codes `blocks` blocks' indices (blocks × perBlock entries) as one byte stream. */
  write(indices: Uint32Array): Uint8Array;
  /** Reads `blocks` blocks' indices from a stream that must hold exactly them (framing and zero padding checked). */
  read(bytes: Uint8Array, blocks: number): Uint32Array;
}

const invalid = (message: string): never => {
  throw new EngineInputError('ENGINE_INVALID_CONTAINER', message);
};

/** After the last block: fewer than 8 bits left, and all of them zero. */
function checkPadding(reader: BitReader, what: string): void {
  const left = reader.remaining;
  if (left >= 8) invalid(`${Math.floor(left / 8)} byte(s) follow the last block of the ${what} stream`);
  if (left > 0 && reader.peek(left) !== 0) invalid(`the padding after the ${what} stream is not zero`);
}

function fixedCoding(size: number): IndexCoding {
  const b = indexBits(size);
  return {
    layout: 'fixed', headerBits: b, stages: 0, bitsPerBlock: b, maxBitsPerBlock: b, perBlock: 1,
    streamBits: (indices) => indices.length * b,
    write: (indices) => {
      const out = new Uint8Array(packedLength(indices.length, b));
      packBits(indices, b, out);
      return out;
    },
    read: (bytes, blocks) => {
      const out = new Uint32Array(blocks);
      unpackBits(bytes, 0, blocks, b, out);
      return out;
    },
  };
}

function huffmanCoding(lengths: Uint8Array): IndexCoding {
  const code: CanonicalCode = canonicalCode(lengths);
  let decoder: HuffmanDecoder | null = null;
  return {
    layout: 'huffman', headerBits: code.maxLength, stages: 0, bitsPerBlock: null, maxBitsPerBlock: code.maxLength, perBlock: 1,
    streamBits: (indices) => {
      let bits = 0;
      for (let i = 0; i < indices.length; i += 1) bits += code.lengths[indices[i]];
      return bits;
    },
    write: (indices) => {
      const w = new BitWriter();
      for (let i = 0; i < indices.length; i += 1) w.write(code.codes[indices[i]], code.lengths[indices[i]]);
      return w.finish().bytes;
    },
    read: (bytes, blocks) => {
      decoder ??= new HuffmanDecoder(code);
      try {
        return decoder.decode(bytes, blocks);
      } catch (error) {
        if (error instanceof EngineInputError) invalid(`Huffman index stream: ${error.message}`);
        throw error;
      }
    },
  };
}

/** Writes the `length` low bits of `value` (length ≤ 32), most significant first. */
function writeWide(w: BitWriter, value: number, length: number): void {
  if (length > 16) {
    w.write(Math.floor(value / 65536), length - 16);
    w.write(value % 65536, 16);
  } else if (length > 0) {
    w.write(value, length);
  }
}

function treeCoding(children: Int32Array, size: number): IndexCoding {
  const shape = treeShape(children, size);
  if (isTreeProblem(shape)) throw new EngineInputError('ENGINE_INVALID_CODEBOOK', `tree: ${shape.message}`);
  // Each node's path from the root as an integer (0 = left, 1 = right, first decision most significant); nodes come
  // in breadth-first order, so a parent is always set before its children.
  const path = new Float64Array(size);
  for (let n = 0; n < size; n += 1) {
    if (children[2 * n] === -1) continue;
    path[children[2 * n]] = path[n] * 2;
    path[children[2 * n + 1]] = path[n] * 2 + 1;
  }
  return {
    layout: 'tree-path', headerBits: shape.maxDepth, stages: 0, bitsPerBlock: shape.balanced ? shape.maxDepth : null, maxBitsPerBlock: shape.maxDepth, perBlock: 1,
    streamBits: (indices) => {
      let bits = 0;
      for (let i = 0; i < indices.length; i += 1) bits += shape.depth[indices[i]];
      return bits;
    },
    write: (indices) => {
      const w = new BitWriter();
      for (let i = 0; i < indices.length; i += 1) writeWide(w, path[indices[i]], shape.depth[indices[i]]);
      return w.finish().bytes;
    },
    read: (bytes, blocks) => {
      // Table lookup by walking: from the root, one bit per level, to a leaf.
      const reader = new BitReader(bytes);
      const out = new Uint32Array(blocks);
      for (let i = 0; i < blocks; i += 1) {
        let n = 0;
        while (children[2 * n] !== -1) {
          if (reader.remaining < 1) invalid(`the tree-path stream ends inside block ${i + 1} of ${blocks}`);
          n = children[2 * n + reader.read(1)];
        }
        out[i] = n;
      }
      checkPadding(reader, 'tree-path');
      return out;
    },
  };
}

function residualCoding(bits: readonly number[]): IndexCoding {
  const { offsets } = stageOffsets(bits);
  const s = bits.length;
  const total = bits.reduce((a, b) => a + b, 0);
  return {
    layout: 'residual-stages', headerBits: total, stages: s, bitsPerBlock: total, maxBitsPerBlock: total, perBlock: s,
    streamBits: (indices) => (indices.length / s) * total,
    write: (indices) => {
      const w = new BitWriter();
      for (let i = 0; i < indices.length; i += 1) w.write(indices[i] - offsets[i % s], bits[i % s]);
      return w.finish().bytes;
    },
    read: (bytes, blocks) => {
      const reader = new BitReader(bytes);
      const out = new Uint32Array(blocks * s);
      if (reader.remaining < blocks * total) invalid(`the residual stream holds ${reader.remaining} bits, ${blocks} blocks need ${blocks * total}`);
      for (let i = 0; i < out.length; i += 1) out[i] = offsets[i % s] + reader.read(bits[i % s]);
      checkPadding(reader, 'residual');
      return out;
    },
  };
}

/** The index coding of a codebook's structure. */
export function indexCodingOf(codebook: Pick<Codebook, 'size' | 'structure'>): IndexCoding {
  const st = codebook.structure;
  switch (st.kind) {
    case 'full':
      return fixedCoding(codebook.size);
    case 'entropy-constrained':
      return huffmanCoding(st.codeLengths);
    case 'tree':
      return treeCoding(st.children, codebook.size);
    case 'residual':
      return residualCoding(st.bits);
  }
}

/**
 * Bits a fixed-length index of this structure takes per block (the "fixed" rate): ceil(log2 K) for full search and
 * for an entropy-constrained table (what its indices would cost without the Huffman code), the longest path of a tree,
 * Σ bits[s] of residual stages.
 */
export function fixedRateBits(codebook: Pick<Codebook, 'size' | 'structure'>): number {
  const s = codebook.structure;
  if (s.kind === 'full' || s.kind === 'entropy-constrained') return indexBits(codebook.size);
  return indexCodingOf(codebook).headerBits;
}
