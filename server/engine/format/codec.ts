import { EngineInputError } from '../input-error';
import type { Codebook } from './codebook-schema';
import type { CodableImage } from '../io/image';
import { blockGrid, tile } from '../io/patches';
import { meanLevel, removeMeans } from '../io/mean-removal';
import { decodeBlockRows, toPixel, type BlockDecodePlan } from '../core/decode-blocks';
import { decodePlanOnThreads, type DecodeThreadsOptions } from '../parallel/decode-rows';
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
export function checkImageMatchesCodebook(codebook: Codebook, image: CodableImage): NonNullable<Codebook['patch']> {
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
export async function encodeImage(codebook: Codebook, image: CodableImage, options: EncodeOptions = {}): Promise<EncodedImage & { distances: Float64Array }> {
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
 * Checks a coded image against the codebook and gathers what the decoder's pixel writer needs (core/decode-blocks.ts):
 * the table of codewords as pixels when each block names one codeword and has no mean code, the mean levels otherwise.
 */
function decodePlan(codebook: Codebook, encoded: EncodedImage): BlockDecodePlan {
  const patch = codebook.patch;
  if (!patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook has no patch geometry, so it cannot reconstruct images');
  const grid = blockGrid(encoded.width, encoded.height, patch);
  const blocks = grid.blocksX * grid.blocksY;
  const per = indicesPerBlock(codebook);
  if (grid.blocksX !== encoded.blocksX || grid.blocksY !== encoded.blocksY || encoded.indices.length !== blocks * per) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `coded image has ${encoded.indices.length} indices, its geometry needs ${blocks * per}`);
  }
  const bits = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  if ((bits > 0) !== (encoded.meanCodes !== null)) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'mean codes do not match the codebook preprocessing');
  checkCodedIndices(codebook, encoded.indices, (message) => {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', message);
  });
  const lookup = per === 1 && !encoded.meanCodes;
  return {
    width: encoded.width, height: encoded.height, channels: patch.color === 'rgb' ? 3 : 1, patchWidth: patch.width, patchHeight: patch.height,
    blocksX: grid.blocksX, blocksY: grid.blocksY, d: codebook.dimension, per,
    table: lookup ? codewordTable(codebook) : null,
    codewords: codebook.codewords, indices: encoded.indices, meanCodes: encoded.meanCodes,
    levels: encoded.meanCodes ? Float64Array.from({ length: 2 ** bits }, (_, q) => meanLevel(q, bits)) : null,
  };
}

/**
 * Decoder: the block's codeword (residual: the sum of its stage codewords, in stage order, in float64) plus the mean
 * level, clamped to 0..255 and rounded half up, blocks written back and the padding cropped. Table lookup for every
 * structure. This (with reconstructOnThreads, which writes the same pixels) is the only way indices turn into pixels,
 * so eval, encode and decode all see the same image.
 * @returns height × width × channels, 8-bit
 */
export function reconstruct(codebook: Codebook, encoded: EncodedImage): Uint8Array {
  const plan = decodePlan(codebook, encoded);
  const out = new Uint8Array(plan.width * plan.height * plan.channels);
  decodeBlockRows(plan, 0, plan.blocksY, out);
  return out;
}

/**
 * reconstruct's image, written by this thread and the engine's worker threads together (bands of block rows into
 * one shared output; parallel/decode-rows.ts) when the image is large; a small one is decoded on this thread.
 * `threads` counts this thread (default: the thread budget's total); `callerThread: false` leaves the bands to the workers.
 */
export async function reconstructOnThreads(codebook: Codebook, encoded: EncodedImage, options: DecodeThreadsOptions = {}): Promise<Uint8Array> {
  return decodePlanOnThreads(decodePlan(codebook, encoded), options);
}

/** Every codeword as pixels (K × d bytes, toPixel of each component): the decoder's lookup table without mean codes. */
function codewordTable(codebook: Codebook): Uint8Array {
  const table = new Uint8Array(codebook.size * codebook.dimension);
  for (let i = 0; i < table.length; i += 1) table[i] = toPixel(codebook.codewords[i]);
  return table;
}
