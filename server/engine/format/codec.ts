import { assign } from '../training';
import { EngineInputError } from '../input-error';
import type { Codebook } from './codebook-schema';
import type { PixelImage } from '../io/image';
import { blockGrid, tile, untile } from '../io/patches';
import { meanLevel, removeMeans } from '../io/mean-removal';

/** An image coded against a codebook: one index per block (raster order of blocks) and, when mean-removed, one mean code per block. */
export interface EncodedImage {
  width: number;
  height: number;
  blocksX: number;
  blocksY: number;
  indices: Uint32Array; // blocksX·blocksY
  meanCodes: Uint8Array | null; // blocksX·blocksY, or null without mean removal
}

export interface EncodeOptions {
  threads?: number;
  signal?: AbortSignal;
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
 * and pick each block's nearest codeword (exact squared error; ties to the lowest index, as the core guarantees).
 * @returns the coded image plus `distances`, the squared error of each block's (residual) vector to its codeword
 */
export async function encodeImage(codebook: Codebook, image: PixelImage, options: EncodeOptions = {}): Promise<EncodedImage & { distances: Float64Array }> {
  const patch = checkImageMatchesCodebook(codebook, image);
  const tiled = tile(image, patch);
  if (tiled.dimension !== codebook.dimension) {
    throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', `${image.name}: block vectors have ${tiled.dimension} components, codebook has ${codebook.dimension}`);
  }
  const meanCodes =
    codebook.preprocessing.kind === 'mean-removed' ? removeMeans(tiled.vectors, tiled.dimension, codebook.preprocessing.meanBits) : null;
  const { indices, distances } = await assign(tiled.vectors, tiled.dimension, codebook.codewords, { threads: options.threads, signal: options.signal });
  return { width: image.width, height: image.height, blocksX: tiled.blocksX, blocksY: tiled.blocksY, indices, meanCodes, distances };
}

/**
 * Decoder: codeword (+ mean level), clamped to 0..255 and rounded half up, blocks written back and the padding cropped.
 * This is the only function that turns indices into pixels, so eval, encode and decode all see the same image.
 * @returns height × width × channels, 8-bit
 */
export function reconstruct(codebook: Codebook, encoded: EncodedImage): Uint8Array {
  const patch = codebook.patch;
  if (!patch) throw new EngineInputError('ENGINE_DIMENSION_MISMATCH', 'this codebook has no patch geometry, so it cannot reconstruct images');
  const grid = blockGrid(encoded.width, encoded.height, patch);
  const blocks = grid.blocksX * grid.blocksY;
  if (grid.blocksX !== encoded.blocksX || grid.blocksY !== encoded.blocksY || encoded.indices.length !== blocks) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `coded image has ${encoded.indices.length} blocks, its geometry needs ${blocks}`);
  }
  const d = codebook.dimension;
  const bits = codebook.preprocessing.kind === 'mean-removed' ? codebook.preprocessing.meanBits : 0;
  if ((bits > 0) !== (encoded.meanCodes !== null)) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'mean codes do not match the codebook preprocessing');
  const blockPixels = new Uint8Array(blocks * d);
  for (let b = 0; b < blocks; b += 1) {
    const index = encoded.indices[b];
    if (index >= codebook.size) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `block ${b} refers to codeword ${index}, codebook has ${codebook.size}`);
    const level = encoded.meanCodes ? meanLevel(encoded.meanCodes[b], bits) : 0;
    const src = index * d;
    const dst = b * d;
    for (let k = 0; k < d; k += 1) {
      const v = codebook.codewords[src + k] + level;
      blockPixels[dst + k] = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
    }
  }
  return untile(blockPixels, encoded.width, encoded.height, patch.color === 'rgb' ? 3 : 1, patch, new Uint8Array(encoded.width * encoded.height * (patch.color === 'rgb' ? 3 : 1)));
}
