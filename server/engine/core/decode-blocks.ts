/**
 * The decoder's pixel writer (format/codec.ts reconstruct): a band of block rows written into an 8-bit image, so that
 * threads can each take bands of one shared output (parallel/decode-rows.ts). Every pixel depends only on its own
 * block's indices and mean code, so the image is the same however the rows are split.
 */

/** A reconstructed value as a pixel: clamped to 0..255 and rounded half up. */
export function toPixel(v: number): number {
  return v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
}

/** What a band of block rows needs: the image geometry, the coded blocks and the codebook (plain data, shareable). */
export interface BlockDecodePlan {
  width: number;
  height: number;
  channels: number;
  patchWidth: number;
  patchHeight: number;
  blocksX: number;
  blocksY: number;
  /** components of a block vector: patchWidth · patchHeight · channels */
  d: number;
  /** indices per block (residual: one per stage, summed in stage order) */
  per: number;
  /** K × d bytes, toPixel of each codeword component: used when per = 1 and there are no mean codes */
  table: Uint8Array | null;
  /** K × d codeword components, read when there is no table */
  codewords: Float32Array;
  indices: Uint32Array;
  meanCodes: Uint8Array | null;
  /** The reconstruction level of each mean code (2^meanBits values), or null without mean removal. */
  levels: Float64Array | null;
}

/**
 * Writes block rows [by0, by1) of the image into `out` (height × width × channels), cropping the padding: each
 * block's codeword (residual: the float64 sum of its stage codewords, in stage order) plus its mean level, as pixels.
 */
export function decodeBlockRows(plan: BlockDecodePlan, by0: number, by1: number, out: Uint8Array): void {
  if (plan.table) writeTableRows(plan, plan.table, by0, by1, out);
  else writeComputedRows(plan, by0, by1, out);
}

/**
 * Table rows straight into the image, without building the blocks first. Whole blocks are copied four bytes at a
 * time when every offset is a multiple of four (with a loop of their own for rows of two words, 8×8 luma); blocks
 * cut by the right or bottom edge, and every block otherwise, byte by byte.
 */
function writeTableRows(plan: BlockDecodePlan, table: Uint8Array, by0: number, by1: number, out: Uint8Array): void {
  const { width, height, channels, patchWidth, patchHeight, blocksX, d, indices } = plan;
  const rowLength = patchWidth * channels;
  const stride = width * channels;
  const words = rowLength % 4 === 0 && stride % 4 === 0 && out.byteOffset % 4 === 0 && table.byteOffset % 4 === 0;
  const fullX = words ? Math.floor(width / patchWidth) : 0;
  for (let by = by0; by < by1; by += 1) {
    const rows = Math.min(patchHeight, height - by * patchHeight);
    const whole = rows === patchHeight ? fullX : 0;
    if (whole > 0) writeWordBlocks(out, table, indices, by * blocksX, whole, (by * patchHeight * stride) >> 2, stride >> 2, rowLength >> 2, patchHeight, d >> 2);
    for (let bx = whole; bx < blocksX; bx += 1) {
      const src = indices[by * blocksX + bx] * d;
      const x0 = bx * rowLength;
      const len = Math.min(rowLength, stride - x0);
      let dst = by * patchHeight * stride + x0;
      for (let r = 0; r < rows; r += 1, dst += stride) {
        const s = src + r * rowLength;
        for (let i = 0; i < len; i += 1) out[dst + i] = table[s + i];
      }
    }
  }
}

/** Blocks [0, count) of one block row, whole, four bytes at a time; offsets and lengths in 32-bit words. */
function writeWordBlocks(
  out: Uint8Array, table: Uint8Array, indices: Uint32Array, firstIndex: number, count: number,
  rowStart: number, strideWords: number, rowWords: number, rows: number, blockWords: number,
): void {
  const out32 = new Uint32Array(out.buffer, out.byteOffset, out.length >> 2);
  const table32 = new Uint32Array(table.buffer, table.byteOffset, table.length >> 2);
  if (rowWords === 2) {
    for (let bx = 0; bx < count; bx += 1) {
      let s = indices[firstIndex + bx] * blockWords;
      let o = rowStart + 2 * bx;
      for (let r = 0; r < rows; r += 1, s += 2, o += strideWords) {
        out32[o] = table32[s];
        out32[o + 1] = table32[s + 1];
      }
    }
    return;
  }
  for (let bx = 0; bx < count; bx += 1) {
    let s = indices[firstIndex + bx] * blockWords;
    let o = rowStart + rowWords * bx;
    for (let r = 0; r < rows; r += 1, s += rowWords, o += strideWords) {
      for (let i = 0; i < rowWords; i += 1) out32[o + i] = table32[s + i];
    }
  }
}

/** Blocks computed one at a time (mean levels added, residual stages summed), then written like table rows. */
function writeComputedRows(plan: BlockDecodePlan, by0: number, by1: number, out: Uint8Array): void {
  const { width, height, channels, patchWidth, patchHeight, blocksX, d, per, codewords, indices, meanCodes, levels } = plan;
  const rowLength = patchWidth * channels;
  const stride = width * channels;
  const block = new Uint8Array(d);
  const sum = new Float64Array(d);
  for (let by = by0; by < by1; by += 1) {
    const rows = Math.min(patchHeight, height - by * patchHeight);
    for (let bx = 0; bx < blocksX; bx += 1) {
      const b = by * blocksX + bx;
      const level = meanCodes && levels ? levels[meanCodes[b]] : 0;
      if (per === 1) {
        const src = indices[b] * d;
        for (let k = 0; k < d; k += 1) block[k] = toPixel(codewords[src + k] + level);
      } else {
        sum.fill(0);
        for (let s = 0; s < per; s += 1) {
          const src = indices[b * per + s] * d;
          for (let k = 0; k < d; k += 1) sum[k] += codewords[src + k];
        }
        for (let k = 0; k < d; k += 1) block[k] = toPixel(sum[k] + level);
      }
      const x0 = bx * rowLength;
      const len = Math.min(rowLength, stride - x0);
      let dst = by * patchHeight * stride + x0;
      for (let r = 0; r < rows; r += 1, dst += stride) {
        const s = r * rowLength;
        for (let i = 0; i < len; i += 1) out[dst + i] = block[s + i];
      }
    }
  }
}
