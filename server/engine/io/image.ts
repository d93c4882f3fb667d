import sharp from 'sharp';
import { EngineInputError } from '../input-error';
import { lumaPlane } from './luma';
import type { ColorMode } from '../vocabulary';

/** How pixels become vector components: one luma value per pixel, or R, G, B per pixel (the vocabulary's modes). */
export type { ColorMode };

export function channelsOf(color: ColorMode): 1 | 3 {
  return color === 'rgb' ? 3 : 1;
}

/**
 * A decoded image on the 0..255 scale.
 * `pixels` is height × width × channels, row-major, channels interleaved (R, G, B for rgb).
 * Luma values are BT.601 and unrounded (see luma.ts); rgb values are the decoded 8-bit integers.
 */
export interface PixelImage {
  name: string;
  width: number;
  height: number;
  color: ColorMode;
  channels: 1 | 3;
  pixels: Float32Array;
}

/**
 * An image as the encoder reads it: a PixelImage, or the same image with its decoded bytes as pixels when every value
 * is an integer (grey as luma, and rgb), which saves the float copy (tile converts each value once, in one pass).
 */
export interface CodableImage extends Omit<PixelImage, 'pixels'> {
  pixels: Float32Array | Uint8Array;
}

/**
 * Bytes decodeImage holds at its peak for a width × height image: sharp's 8-bit RGB output (3 bytes a pixel) and,
 * made from it, the float32 pixels (4 bytes a pixel and channel). libvips' own working memory during the decode is
 * not included (it streams most formats and shares sharp's small operation cache).
 */
export function decodedImageBytes(width: number, height: number, color: ColorMode): number {
  return width * height * (3 + 4 * channelsOf(color));
}

/** Extensions read from an image folder; the formats sharp decodes in every prebuilt binary, plus AVIF through libheif. */
export const IMAGE_EXTENSIONS = Object.freeze(['.png', '.jpg', '.jpeg', '.webp', '.tif', '.tiff', '.avif']);

/**
 * Decodes an image file or buffer with sharp.
 * Alpha is dropped (pixels are taken as stored, not composited) and grey or palette images are expanded to sRGB first,
 * so every source yields the same three-channel path before luma is taken. EXIF orientation is not applied:
 * the codec works on the stored raster, exactly as the baselines do.
 */
export async function decodeImage(input: Buffer | string, color: ColorMode, name = typeof input === 'string' ? input : 'image'): Promise<PixelImage> {
  const raw = await decodeRaw(input, name);
  return raw.grey ? fromGrey8(name, raw.width, raw.height, raw.data, color) : fromRgb8(name, raw.width, raw.height, raw.data, color);
}

/**
 * decodeImage's image for coding (format/codec.ts encodeImage): the same values, but kept as the decoded bytes when
 * they are the pixels themselves — a grey image as luma (a grey pixel's luma is its own value, fromGrey8), and any
 * image as rgb (R, G, B as decoded, fromRgb8; a grey one's value three times) — instead of a float copy of the image.
 */
export async function decodeImageForCoding(input: Buffer | string, color: ColorMode, name = typeof input === 'string' ? input : 'image'): Promise<CodableImage> {
  const raw = await decodeRaw(input, name);
  const { width, height, data } = raw;
  const base = { name, width, height, color, channels: channelsOf(color) };
  if (color === 'luma') return raw.grey ? { ...base, pixels: data } : fromRgb8(name, width, height, data, color);
  if (!raw.grey) return { ...base, pixels: data };
  const pixels = new Uint8Array(data.length * 3);
  for (let i = 0, j = 0; i < data.length; i += 1, j += 3) pixels[j] = pixels[j + 1] = pixels[j + 2] = data[i];
  return { ...base, pixels };
}

/** The decoded 8-bit raster: one grey channel (decodeGrey) or sRGB without alpha, three channels interleaved. */
async function decodeRaw(input: Buffer | string, name: string): Promise<{ grey: boolean; data: Buffer; width: number; height: number }> {
  try {
    const grey = await decodeGrey(input);
    if (grey) return { grey: true, ...grey };
    const out = await sharp(input, { failOn: 'error' })
      .removeAlpha()
      .toColourspace('srgb')
      .raw({ depth: 'uchar' })
      .toBuffer({ resolveWithObject: true });
    if (out.info.channels !== 3) throw new Error(`unexpected ${out.info.channels} channels after conversion to sRGB`);
    return { grey: false, data: out.data, width: out.info.width, height: out.info.height };
  } catch (error) {
    const reason = error instanceof Error ? error.message.split('\n')[0] : String(error);
    throw new EngineInputError('ENGINE_INVALID_IMAGE', `${name}: cannot decode image (${reason})`);
  }
}

/**
 * An 8-bit grey image without an ICC profile (grey or grey + alpha) decoded to one channel, or null for any other
 * image. Expanding such a grey to sRGB only repeats the value in R, G and B, so this is the general path's raster
 * with a third of the bytes and no conversion (tests/unit/engine-io/grey-decode.test.ts compares the two).
 */
async function decodeGrey(input: Buffer | string): Promise<{ data: Buffer; width: number; height: number } | null> {
  const meta = await sharp(input, { failOn: 'error' }).metadata();
  const channels = meta.hasAlpha ? 2 : 1;
  if (meta.channels !== channels || meta.depth !== 'uchar' || meta.space !== 'b-w' || meta.icc) return null;
  const out = await sharp(input, { failOn: 'error' }).removeAlpha().toColourspace('b-w').raw({ depth: 'uchar' }).toBuffer({ resolveWithObject: true });
  if (out.info.channels !== 1) return null;
  return { data: out.data, width: out.info.width, height: out.info.height };
}

/**
 * Builds a PixelImage from 8-bit grey (height × width): a grey pixel's luma is its own value (luma.ts; checked for
 * all 256 values by tests/unit/engine-io/grey-decode.test.ts) and its RGB is the value three times.
 */
export function fromGrey8(name: string, width: number, height: number, grey: Uint8Array, color: ColorMode): PixelImage {
  const count = width * height;
  if (grey.length !== count) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${name}: expected ${count} grey bytes for ${width}×${height}, got ${grey.length}`);
  let pixels: Float32Array;
  if (color === 'rgb') {
    pixels = new Float32Array(count * 3);
    for (let i = 0, j = 0; i < count; i += 1, j += 3) pixels[j] = pixels[j + 1] = pixels[j + 2] = grey[i];
  } else {
    pixels = new Float32Array(count);
    pixels.set(grey);
  }
  return { name, width, height, color, channels: channelsOf(color), pixels };
}

/**
 * The stored raster's width and height from the file's header, without decoding its pixels (EXIF orientation not
 * applied, as decodeImage does not apply it).
 */
export async function readImageSize(input: Buffer | string, name = typeof input === 'string' ? input : 'image'): Promise<{ width: number; height: number }> {
  let width: number | undefined;
  let height: number | undefined;
  try {
    ({ width, height } = await sharp(input, { failOn: 'error' }).metadata());
  } catch (error) {
    const reason = error instanceof Error ? error.message.split('\n')[0] : String(error);
    throw new EngineInputError('ENGINE_INVALID_IMAGE', `${name}: cannot decode image (${reason})`);
  }
  if (!width || !height) throw new EngineInputError('ENGINE_INVALID_IMAGE', `${name}: the image header gives no size`);
  return { width, height };
}

/** Builds a PixelImage from interleaved 8-bit RGB (height × width × 3). */
export function fromRgb8(name: string, width: number, height: number, rgb: Uint8Array, color: ColorMode): PixelImage {
  const count = width * height;
  if (rgb.length !== count * 3) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${name}: expected ${count * 3} RGB bytes for ${width}×${height}, got ${rgb.length}`);
  }
  const pixels = color === 'rgb' ? Float32Array.from(rgb) : lumaPlane(rgb, count);
  return { name, width, height, color, channels: channelsOf(color), pixels };
}

/** Pixels clamped to 0..255 and rounded half up: the 8-bit form every PNG, metric and baseline works from. */
export function toUint8(pixels: ArrayLike<number>): Uint8Array {
  const out = new Uint8Array(pixels.length);
  for (let i = 0; i < pixels.length; i += 1) {
    const v = pixels[i];
    out[i] = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
  }
  return out;
}
