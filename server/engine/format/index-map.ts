import { writeNpyArray } from '../io/npy';
import type { EncodedImage } from './codec';

/**
 * An image's index map as a NumPy .npy file (NEP 1, version 1.0): blocksY × blocksX, C order, each block's codeword
 * index in the raster order of blocks, so `codewords[indices]` gives the blocks' codewords. uint16 ('<u2') while
 * the codebook has at most 65,536 codewords (every codebook the studio trains), uint32 ('<u4') beyond.
 */
export function indexMapNpy(encoded: Pick<EncodedImage, 'blocksX' | 'blocksY' | 'indices'>, codebookSize: number): Buffer {
  const indices = codebookSize <= 65536 ? Uint16Array.from(encoded.indices) : encoded.indices;
  return writeNpyArray(indices, [encoded.blocksY, encoded.blocksX]);
}

/** The block means of a mean-removed codebook's coding as .npy: blocksY × blocksX quantised mean codes, uint8 ('|u1'). */
export function meanCodesNpy(encoded: Pick<EncodedImage, 'blocksX' | 'blocksY' | 'meanCodes'>): Buffer | null {
  return encoded.meanCodes ? writeNpyArray(encoded.meanCodes, [encoded.blocksY, encoded.blocksX]) : null;
}
