import { psnrFromMse } from './distortion';

export interface TileError {
  x: number;
  y: number;
  width: number;
  height: number;
  /** mean squared error per component over the tile, 0..255 scale */
  mse: number;
  /** PSNR from that MSE; +∞ when the tile is exact */
  psnr: number;
}

/**
 * The error of a reconstruction over a grid of size × size tiles (the right and bottom tiles are cut to the image),
 * worst first (highest MSE; ties by position, so the order is the same on every run).
 * `original` and `reconstruction` are height × width × channels, row-major, channels interleaved.
 */
export function tileErrors(
  original: ArrayLike<number>,
  reconstruction: ArrayLike<number>,
  width: number,
  height: number,
  channels: number,
  size: number,
): TileError[] {
  if (original.length !== width * height * channels || reconstruction.length !== original.length) {
    throw new RangeError(`tileErrors: expected ${width * height * channels} components in both images`);
  }
  if (!Number.isInteger(size) || size < 1) throw new RangeError('tileErrors: tile size must be a positive whole number');
  const tiles: TileError[] = [];
  for (let ty = 0; ty < height; ty += size) {
    for (let tx = 0; tx < width; tx += size) {
      const w = Math.min(size, width - tx);
      const h = Math.min(size, height - ty);
      let sse = 0;
      for (let y = ty; y < ty + h; y += 1) {
        const row = (y * width + tx) * channels;
        for (let i = row; i < row + w * channels; i += 1) {
          const d = original[i] - reconstruction[i];
          sse += d * d;
        }
      }
      const mse = sse / (w * h * channels);
      tiles.push({ x: tx, y: ty, width: w, height: h, mse, psnr: psnrFromMse(mse) });
    }
  }
  return tiles.sort((a, b) => b.mse - a.mse || a.y - b.y || a.x - b.x);
}
