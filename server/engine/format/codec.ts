import { EngineInputError } from '../input-error';
import type { Codebook } from './codebook-schema';
import type { PixelImage } from '../io/image';
import { blockGrid, tile, untile } from '../io/patches';
import { meanLevel, removeMeans } from '../io/mean-removal';
import { indicesPerBlock, searchStructure } from './structure-search';
import { stageOffsets } from './structure-check';

/** An image coded against a codebook: one index per block (raster order of blocks) and, when mean-removed, one mean code per block. */
export interface EncodedImage {
  width: number;
  height: number;
  blocksX: number;
  blocksY: number;
  /** blocksX·blocksY table indices (a tree's: the leaf's node), or blocksX·blocksY × S for residual (structure-search.ts) */
  indices: Uint32Array;
  meanCodes: Uint8Array | null; // blocksX·blocksY, or null without mean removal
}

export interface EncodeOptions {
  threads?: number;
  signal?: AbortSignal;
  /** The calling thread takes part in the search (a command-line process; see parallel/encode-search.ts). */
  callerThread?: boolean;
}

/** Checks that an image can be coded with a codebook: same colour handling, and a codebook that has a patch at all. */
export function checkImageMatchesCodebook(codebook: Codebook, image: PixelImage): NonNullable<Codebook['patch']> {
  const patch = codebook.patch;
  if (!patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook was trained on raw vectors and has no patch geometry, so it cannot code images');
  if (patch.color !== image.color) {
    throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', `${image.name}: codebook expects ${patch.color} images, got ${image.color}`);
  }
  return patch;
}

/**
 * Vector-quantizes an image: tile into blocks, remove quantized block means when the codebook is mean-removed,
 * and search the codebook as its structure says (structure-search.ts: full search picks the nearest codeword, exact
 * squared error, ties to the lowest index).
 * @returns the coded image plus `distances`, the squared error of each block's (residual) vector to its codeword
 */
export async function encodeImage(codebook: Codebook, image: PixelImage, options: EncodeOptions = {}): Promise<EncodedImage & { distances: Float64Array }> {
  const patch = checkImageMatchesCodebook(codebook, image);
  // In shared memory, so that the search's workers read the blocks without a copy.
  const tiled = tile(image, patch, { shared: true });
  if (tiled.dimension !== codebook.dimension) {
    throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', `${image.name}: block vectors have ${tiled.dimension} components, codebook has ${codebook.dimension}`);
  }
  const meanCodes =
    codebook.preprocessing.kind === 'mean-removed' ? removeMeans(tiled.vectors, tiled.dimension, codebook.preprocessing.meanBits) : null;
  const { indices, distances } = await searchStructure(codebook, tiled.vectors, tiled.dimension, { threads: options.threads, signal: options.signal, callerThread: options.callerThread });
  return { width: image.width, height: image.height, blocksX: tiled.blocksX, blocksY: tiled.blocksY, indices, meanCodes, distances };
}

/**
 * Which table entries a block may name, per structure: any codeword (full, entropy-constrained), a leaf (tree), or
 * per stage one codeword of that stage (residual).
 * @returns per stage (one entry unless residual): [first, end) table range and, for a tree, the leaf flags
 */
function allowedEntries(codebook: Codebook): { ranges: [number, number][]; leaf: Uint8Array | null } {
  const s = codebook.structure;
  if (s.kind === 'residual') {
    const { offsets } = stageOffsets(s.bits);
    return { ranges: s.bits.map((b, i) => [offsets[i], offsets[i] + 2 ** b]), leaf: null };
  }
  if (s.kind === 'tree') {
    const leaf = new Uint8Array(codebook.size);
    for (let n = 0; n < codebook.size; n += 1) leaf[n] = s.children[2 * n] === -1 ? 1 : 0;
    return { ranges: [[0, codebook.size]], leaf };
  }
  return { ranges: [[0, codebook.size]], leaf: null };
}

/**
 * Checks every index of a coded image against the codebook's structure; the message names the first bad block.
 * @param indices blocks × indicesPerBlock(codebook)
 */
export function checkCodedIndices(codebook: Codebook, indices: Uint32Array, fail: (message: string) => never): void {
  const { ranges, leaf } = allowedEntries(codebook);
  const per = ranges.length;
  for (let i = 0; i < indices.length; i += 1) {
    const [lo, hi] = ranges[i % per];
    const j = indices[i];
    const block = Math.floor(i / per);
    if (j < lo || j >= hi) fail(per > 1 ? `block ${block} stage ${i % per} refers to codeword ${j}, the stage holds ${lo}..${hi - 1}` : `block ${block} refers to codeword ${j}, codebook has ${codebook.size}`);
    if (leaf && !leaf[j]) fail(`block ${block} refers to node ${j}, which is not a leaf of the tree`);
  }
}

/**
 * Decoder: the block's codeword (residual: the sum of its stage codewords, in stage order, in float64) plus the mean
 * level, clamped to 0..255 and rounded half up, blocks written back and the padding cropped. Table lookup for every
 * structure. This is the only function that turns indices into pixels, so eval, encode and decode all see the same image.
 * @returns height × width × channels, 8-bit
 */
export function reconstruct(codebook: Codebook, encoded: EncodedImage): Uint8Array {
  const patch = codebook.patch;
  if (!patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook has no patch geometry, so it cannot reconstruct images');
  const grid = blockGrid(encoded.width, encoded.height, patch);
  const blocks = grid.blocksX * grid.blocksY;
  const per = indicesPerBlock(codebook);
  if (grid.blocksX !== encoded.blocksX || grid.blocksY !== encoded.blocksY || encoded.indices.length !== blocks * per) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `coded image has ${encoded.indices.length} indices, its geometry needs ${blocks * per}`);
  }
  const d = codebook.dimension;
  const bits = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  if ((bits > 0) !== (encoded.meanCodes !== null)) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'mean codes do not match the codebook preprocessing');
  checkCodedIndices(codebook, encoded.indices, (message) => {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', message);
  });
  const channels = patch.color === 'rgb' ? 3 : 1;
  const out = new Uint8Array(encoded.width * encoded.height * channels);
  if (per === 1 && !encoded.meanCodes) {
    writeBlocks(out, encoded.width, encoded.height, channels, patch, grid.blocksX, grid.blocksY, codewordTable(codebook), encoded.indices, d);
    return out;
  }
  const blockPixels = new Uint8Array(blocks * d);
  const sum = new Float64Array(d);
  for (let b = 0; b < blocks; b += 1) {
    const level = encoded.meanCodes ? meanLevel(encoded.meanCodes[b], bits) : 0;
    const dst = b * d;
    if (per === 1) {
      const src = encoded.indices[b] * d;
      for (let k = 0; k < d; k += 1) blockPixels[dst + k] = toPixel(codebook.codewords[src + k] + level);
      continue;
    }
    sum.fill(0);
    for (let s = 0; s < per; s += 1) {
      const src = encoded.indices[b * per + s] * d;
      for (let k = 0; k < d; k += 1) sum[k] += codebook.codewords[src + k];
    }
    for (let k = 0; k < d; k += 1) blockPixels[dst + k] = toPixel(sum[k] + level);
  }
  return untile(blockPixels, encoded.width, encoded.height, channels, patch, out);
}

/** A reconstructed value as a pixel: clamped to 0..255 and rounded half up. */
function toPixel(v: number): number {
  return v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
}

/** Every codeword as pixels (K × d bytes, toPixel of each component): the decoder's lookup table without mean codes. */
function codewordTable(codebook: Codebook): Uint8Array {
  const table = new Uint8Array(codebook.size * codebook.dimension);
  for (let i = 0; i < table.length; i += 1) table[i] = toPixel(codebook.codewords[i]);
  return table;
}

/**
 * Writes each block's table row (`table` K × d bytes, indexed by `indices`) into the image, block row by block row,
 * cropping the padding: what untile does with the blocks' pixels, without building them first. Rows of whole
 * blocks are copied four bytes at a time when every offset is a multiple of four.
 */
function writeBlocks(
  out: Uint8Array, width: number, height: number, channels: number, patch: { width: number; height: number },
  blocksX: number, blocksY: number, table: Uint8Array, indices: Uint32Array, d: number,
): void {
  const rowLength = patch.width * channels;
  const stride = width * channels;
  const fullX = Math.floor(width / patch.width);
  const words = rowLength % 4 === 0 && stride % 4 === 0 && out.byteOffset % 4 === 0;
  const out32 = words ? new Uint32Array(out.buffer, out.byteOffset, out.length >> 2) : null;
  const table32 = words ? new Uint32Array(table.buffer, table.byteOffset, table.length >> 2) : null;
  const rowWords = rowLength >> 2;
  for (let by = 0; by < blocksY; by += 1) {
    const rows = Math.min(patch.height, height - by * patch.height);
    for (let bx = 0; bx < blocksX; bx += 1) {
      const src = indices[by * blocksX + bx] * d;
      const x0 = bx * patch.width * channels;
      let dst = by * patch.height * stride + x0;
      if (out32 && table32 && bx < fullX) {
        let s32 = src >> 2;
        let d32 = dst >> 2;
        for (let r = 0; r < rows; r += 1, s32 += rowWords, d32 += stride >> 2) {
          for (let i = 0; i < rowWords; i += 1) out32[d32 + i] = table32[s32 + i];
        }
        continue;
      }
      const len = Math.min(rowLength, stride - x0);
      for (let r = 0; r < rows; r += 1, dst += stride) {
        const s = src + r * rowLength;
        for (let i = 0; i < len; i += 1) out[dst + i] = table[s + i];
      }
    }
  }
}
