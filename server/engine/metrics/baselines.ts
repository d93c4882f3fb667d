import sharp from 'sharp';
import { EngineInputError } from '../input-error';
import { toUint8, type PixelImage } from '../io/image';
import { lumaPlane } from '../io/luma';
import { psnrFromMse, sumSquaredError } from './distortion';
import { poolSsim, ssimOfImages } from './ssim';

/**
 * Rate–distortion points of standard codecs through sharp, measured exactly as VQ codebooks are:
 * rate = encoded bytes × 8 / pixels; MSE/PSNR/SSIM of the decoded 8-bit image against the same source pixels.
 * Luma sets are encoded as grey images (JPEG writes a one-component file; WebP and AVIF carry neutral chroma) and
 * compared on the decoded luma, rounded to 8 bits as any grey decoder would output. Encoder settings are sharp's
 * defaults apart from quality (JPEG 4:2:0 chroma subsampling for colour, WebP and AVIF effort 4).
 */
export type BaselineCodec = 'jpeg' | 'webp' | 'avif';
export const BASELINE_CODECS: readonly BaselineCodec[] = ['jpeg', 'webp', 'avif'];
export const DEFAULT_QUALITIES: readonly number[] = [5, 10, 20, 30, 40, 50, 60, 70, 80, 90, 95];

export interface BaselinePoint {
  codec: BaselineCodec;
  quality: number;
  pixels: number;
  bytes: number;
  bpp: number;
  mse: number;
  psnr: number;
  ssim: number | null;
}

let avifProbe: Promise<boolean> | null = null;

/** Whether this sharp build can write AVIF; probed once by encoding a tiny image, since prebuilt binaries differ. */
export function canEncodeAvif(): Promise<boolean> {
  avifProbe ??= sharp(Buffer.alloc(16 * 16 * 3, 128), { raw: { width: 16, height: 16, channels: 3 } })
    .avif({ quality: 50 })
    .toBuffer()
    .then((b) => b.length > 0)
    .catch(() => false);
  return avifProbe;
}

export async function availableBaselineCodecs(): Promise<BaselineCodec[]> {
  return (await canEncodeAvif()) ? [...BASELINE_CODECS] : ['jpeg', 'webp'];
}

function sourceBytes(image: PixelImage): Buffer {
  const u8 = toUint8(image.pixels);
  return Buffer.from(u8.buffer, u8.byteOffset, u8.byteLength);
}

export async function encodeWith(codec: BaselineCodec, image: PixelImage, quality: number): Promise<Buffer> {
  let pipeline = sharp(sourceBytes(image), { raw: { width: image.width, height: image.height, channels: image.channels } });
  if (image.channels === 1) pipeline = pipeline.toColourspace('b-w');
  if (codec === 'jpeg') return pipeline.jpeg({ quality }).toBuffer();
  if (codec === 'webp') return pipeline.webp({ quality }).toBuffer();
  return pipeline.avif({ quality }).toBuffer();
}

/** Decodes a baseline file to the image's colour handling: 8-bit RGB, or 8-bit (rounded) BT.601 luma. */
export async function decodeForComparison(file: Buffer, image: PixelImage): Promise<Uint8Array> {
  const { data, info } = await sharp(file).removeAlpha().toColourspace('srgb').raw({ depth: 'uchar' }).toBuffer({ resolveWithObject: true });
  if (info.width !== image.width || info.height !== image.height) throw new EngineInputError('ENGINE_UNSUPPORTED', `${image.name}: decoder returned ${info.width}×${info.height}`);
  return image.channels === 3 ? new Uint8Array(data.buffer, data.byteOffset, data.byteLength) : toUint8(lumaPlane(data, info.width * info.height));
}

export interface BaselineOptions {
  codecs?: BaselineCodec[];
  qualities?: number[];
  signal?: AbortSignal;
  onPoint?: (done: number, total: number) => void;
}

/** One point per codec and quality, pooled over the images (bytes and squared errors summed, SSIM averaged). */
export async function baselineCurve(images: PixelImage[], options: BaselineOptions = {}): Promise<BaselinePoint[]> {
  if (images.length === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'no images for the baselines');
  const qualities = options.qualities ?? [...DEFAULT_QUALITIES];
  for (const q of qualities) {
    if (!Number.isInteger(q) || q < 1 || q > 100) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `quality must be an integer from 1 to 100, got ${q}`, 'qualities');
  }
  const codecs = options.codecs ?? ['jpeg', 'webp'];
  if (codecs.includes('avif') && !(await canEncodeAvif())) throw new EngineInputError('ENGINE_UNSUPPORTED', 'this sharp build cannot encode AVIF');
  const points: BaselinePoint[] = [];
  const total = codecs.length * qualities.length;
  for (const codec of codecs) {
    for (const quality of qualities) {
      options.signal?.throwIfAborted();
      let bytes = 0;
      let sse = 0;
      let components = 0;
      let pixels = 0;
      const ssims: { ssim: number | null; pixels: number }[] = [];
      for (const image of images) {
        const file = await encodeWith(codec, image, quality);
        const decoded = await decodeForComparison(file, image);
        bytes += file.length;
        sse += sumSquaredError(image.pixels, decoded);
        components += image.pixels.length;
        pixels += image.width * image.height;
        ssims.push({ ssim: ssimOfImages(image.pixels, decoded, image.width, image.height, image.channels), pixels: image.width * image.height });
      }
      const mse = sse / components;
      points.push({
        codec,
        quality,
        pixels,
        bytes,
        bpp: (bytes * 8) / pixels,
        mse,
        psnr: psnrFromMse(mse),
        ssim: poolSsim(ssims),
      });
      options.onPoint?.(points.length, total);
    }
  }
  return points;
}
