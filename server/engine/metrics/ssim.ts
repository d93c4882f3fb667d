import { ssim as ssimJs } from 'ssim.js';
import { lumaPlane } from '../io/luma';
import { toUint8 } from '../io/image';

/**
 * SSIM as defined by Wang, Bovik, Sheikh and Simoncelli, "Image quality assessment: from error visibility to structural
 * similarity", IEEE TIP 13(4), 2004: 11×11 Gaussian window (σ = 1.5), K1 = 0.01, K2 = 0.03, L = 255, 'valid' filtering,
 * mean of the SSIM map. Computed by ssim.js in its 'original' mode, a line-by-line port of the authors' ssim.m; its
 * default ('weber') is a faster approximation and is not used.
 *
 * Downsampling is off: the authors' later distribution of ssim.m shrinks images whose smaller side is ≥ 256 px before
 * comparing, which makes the score depend on image size; we measure every image at full resolution, so scores of small
 * and large images mean the same thing. Colour images are compared on their BT.601 luma, rounded to 8 bits.
 */
export const SSIM_WINDOW = 11;
export const SSIM_K1 = 0.01;
export const SSIM_K2 = 0.03;

export interface SsimConstants {
  k1?: number;
  k2?: number;
}

/**
 * Mean SSIM of two 8-bit grey images (height × width).
 * @returns the mean SSIM, or null when the image is smaller than the 11×11 window (the index is undefined there)
 */
export function ssimGrey(a: Uint8Array, b: Uint8Array, width: number, height: number, constants: SsimConstants = {}): number | null {
  if (a.length !== width * height || b.length !== width * height) throw new RangeError('ssimGrey: pixel count does not match width × height');
  if (width < SSIM_WINDOW || height < SSIM_WINDOW) return null;
  // ssim.js takes RGBA ImageData and converts to grey itself; with R = G = B its conversion returns the value unchanged.
  const toRgba = (grey: Uint8Array) => {
    const out = new Uint8ClampedArray(grey.length * 4);
    for (let i = 0; i < grey.length; i += 1) {
      out[4 * i] = grey[i];
      out[4 * i + 1] = grey[i];
      out[4 * i + 2] = grey[i];
      out[4 * i + 3] = 255;
    }
    return { data: out, width, height };
  };
  const { mssim } = ssimJs(toRgba(a), toRgba(b), {
    ssim: 'original',
    downsample: false,
    k1: constants.k1 ?? SSIM_K1,
    k2: constants.k2 ?? SSIM_K2,
    windowSize: SSIM_WINDOW,
    bitDepth: 8,
  });
  return mssim;
}

/** The 8-bit grey plane SSIM sees: luma images rounded, rgb images reduced to BT.601 luma and rounded. */
export function greyPlaneForSsim(pixels: ArrayLike<number>, channels: 1 | 3): Uint8Array {
  return channels === 1 ? toUint8(pixels) : toUint8(lumaPlane(pixels, pixels.length / 3));
}

/** SSIM of two images with the same geometry, on the plane `greyPlaneForSsim` defines. */
export function ssimOfImages(a: ArrayLike<number>, b: ArrayLike<number>, width: number, height: number, channels: 1 | 3): number | null {
  if (width < SSIM_WINDOW || height < SSIM_WINDOW) return null;
  return ssimGrey(greyPlaneForSsim(a, channels), greyPlaneForSsim(b, channels), width, height);
}

/**
 * The one rule for pooling SSIM over a set of images, used by the command line and the studio alike: the mean of
 * the images' SSIM weighted by their pixel counts, so a large image counts as much as the same pixels cut into
 * small ones (common practice for sets of mixed sizes). Images too small for the SSIM window (ssim null) are left
 * out; null when none is left.
 */
export function poolSsim(images: Iterable<{ ssim: number | null; pixels: number }>): number | null {
  let weighted = 0;
  let weight = 0;
  for (const image of images) {
    if (image.ssim === null) continue;
    weighted += image.ssim * image.pixels;
    weight += image.pixels;
  }
  return weight > 0 ? weighted / weight : null;
}
