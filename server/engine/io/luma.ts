/**
 * Luma from gamma-encoded 8-bit R'G'B' with the ITU-R BT.601 weights (Rec. ITU-R BT.601, Y' = 0.299 R' + 0.587 G' + 0.114 B').
 * The 8-bit range is kept and the result is not rounded, so a grey pixel (R = G = B) maps to its own value
 * and colour detail below one code value survives into the training vectors.
 */
export const BT601_WEIGHTS = Object.freeze({ r: 0.299, g: 0.587, b: 0.114 });

export function lumaBt601(r: number, g: number, b: number): number {
  return BT601_WEIGHTS.r * r + BT601_WEIGHTS.g * g + BT601_WEIGHTS.b * b;
}

/**
 * Luma plane of an interleaved RGB image.
 * @param rgb  height × width × 3, row-major, channels interleaved R, G, B
 * @returns    height × width luma values on the 0..255 scale, unrounded
 */
export function lumaPlane(rgb: ArrayLike<number>, pixelCount: number): Float32Array {
  const out = new Float32Array(pixelCount);
  for (let i = 0, j = 0; i < pixelCount; i += 1, j += 3) {
    out[i] = lumaBt601(rgb[j], rgb[j + 1], rgb[j + 2]);
  }
  return out;
}
