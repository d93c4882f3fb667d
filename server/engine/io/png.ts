import sharp from 'sharp';

/**
 * Writes 8-bit pixels (height × width × channels, interleaved) as PNG.
 * One channel is written as a greyscale PNG, three as RGB. Compression level 9 because these files are kept, not streamed.
 */
export async function encodePng(pixels: Uint8Array, width: number, height: number, channels: 1 | 3): Promise<Buffer> {
  const image = sharp(Buffer.from(pixels.buffer, pixels.byteOffset, pixels.byteLength), { raw: { width, height, channels } });
  return (channels === 1 ? image.toColourspace('b-w') : image).png({ compressionLevel: 9 }).toBuffer();
}

/**
 * Default amplification of the error map: an absolute error of 64 code values or more shows as white,
 * so the few-level errors typical of a good codebook stay visible instead of near-black.
 */
export const ERROR_MAP_GAIN = 4;

/**
 * Error map as a greyscale image: per pixel, the largest absolute difference over its channels, times `gain`,
 * clamped to 0..255 and rounded. Black means exact.
 * @param original        height × width × channels, 0..255 scale (may be unrounded luma)
 * @param reconstruction  height × width × channels, 8-bit
 * @returns               height × width, 8-bit
 */
export function errorMap(original: ArrayLike<number>, reconstruction: ArrayLike<number>, channels: number, gain = ERROR_MAP_GAIN): Uint8Array {
  const count = original.length / channels;
  const out = new Uint8Array(count);
  for (let p = 0; p < count; p += 1) {
    let worst = 0;
    for (let c = 0; c < channels; c += 1) {
      const e = Math.abs(original[p * channels + c] - reconstruction[p * channels + c]);
      if (e > worst) worst = e;
    }
    const v = worst * gain;
    out[p] = v >= 255 ? 255 : Math.floor(v + 0.5);
  }
  return out;
}

export async function encodeErrorMapPng(original: ArrayLike<number>, reconstruction: ArrayLike<number>, width: number, height: number, channels: number, gain = ERROR_MAP_GAIN): Promise<Buffer> {
  return encodePng(errorMap(original, reconstruction, channels, gain), width, height, 1);
}
