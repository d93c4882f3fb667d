import sharp, { type Metadata } from 'sharp';
import { trailingBytesInFile } from './trailing-data';

/** Raster formats the studio accepts; each decodes in every prebuilt sharp (AVIF through libheif). */
export const imageFormats = ['png', 'jpeg', 'webp', 'tiff', 'avif', 'gif'] as const;
export type ImageFormat = (typeof imageFormats)[number];

export const contentTypeOf: Record<ImageFormat, string> = {
  png: 'image/png',
  jpeg: 'image/jpeg',
  webp: 'image/webp',
  tiff: 'image/tiff',
  avif: 'image/avif',
  gif: 'image/gif',
};

/** Thumbnails fit inside this square; small enough for a grid of hundreds, big enough to tell tiles apart. */
export const thumbnailSize = 160;

export interface InspectedImage {
  width: number;
  height: number;
  /** As stored, alpha included (a grey PNG has 1, an RGBA one 4). */
  channels: number;
  format: ImageFormat;
  /** WebP, inside thumbnailSize × thumbnailSize. */
  thumbnail: Buffer;
}

/** A WebP inside thumbnailSize × thumbnailSize of the stored raster (no EXIF rotation: the codec sees it unrotated too). */
export function makeThumbnail(input: Buffer | string, maxPixels: number): Promise<Buffer> {
  return sharp(input, { failOn: 'error', limitInputPixels: maxPixels })
    .resize({ width: thumbnailSize, height: thumbnailSize, fit: 'inside', withoutEnlargement: true })
    .webp({ quality: 82 })
    .toBuffer();
}

/** A file that is not an image the studio can use; the message names it and says why. */
export class ImageRejected extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ImageRejected';
  }
}

const firstLine = (err: unknown) => (err instanceof Error ? err.message.split('\n')[0].trim().replace(/:$/, '') : String(err));

function formatOf(meta: Metadata): ImageFormat | null {
  // sharp reports AVIF as HEIF with AV1 compression; HEIC (HEVC) is a different, unsupported codec.
  if (meta.format === 'heif') return meta.compression === 'av1' ? 'avif' : null;
  return (imageFormats as readonly string[]).includes(meta.format ?? '') ? (meta.format as ImageFormat) : null;
}

const acceptedList = 'PNG, JPEG, WebP, TIFF, AVIF or GIF';

/**
 * Decodes the whole image before anything is stored: the header alone says nothing about a truncated
 * or corrupt body, so the pixels are decoded in full (stats() reads every pixel without keeping them).
 * failOn 'error' also aborts on truncation; the pixel limit is checked from the header first so the
 * message can say how big the image claims to be. The file is read from disk by libvips as it decodes.
 */
export async function inspectImage(file: { path: string; bytes: number }, label: string, limits: { maxPixels: number }): Promise<InspectedImage> {
  if (file.bytes === 0) throw new ImageRejected(`${label}: the file is empty`);
  // Some decoders name the file they read; the client knows it by its label, and server paths stay private.
  const reasonOf = (err: unknown) => firstLine(err).split(file.path).join(label);
  let meta: Metadata;
  try {
    meta = await sharp(file.path, { failOn: 'error', limitInputPixels: false }).metadata();
  } catch (err) {
    const reason = reasonOf(err);
    if (/unsupported image format/i.test(reason)) {
      throw new ImageRejected(`${label}: not an image in a format the studio reads (${acceptedList})`);
    }
    throw new ImageRejected(`${label}: the image header cannot be read (${reason})`);
  }
  const format = formatOf(meta);
  if (!format) {
    const found = meta.format === 'heif' ? `HEIF (${meta.compression ?? 'unknown'})` : String(meta.format).toUpperCase();
    throw new ImageRejected(`${label}: ${found} is not accepted; upload ${acceptedList} images`);
  }
  const { width, height } = meta;
  if (!width || !height) throw new ImageRejected(`${label}: the image declares no size`);
  if (width * height > limits.maxPixels) {
    throw new ImageRejected(
      `${label}: ${width}×${height} is ${width * height} pixels, more than the limit of ${limits.maxPixels} pixels per image`,
    );
  }
  const extra = await trailingBytesInFile(format, file.path);
  if (extra > 0) {
    throw new ImageRejected(
      `${label}: ${extra} bytes follow the end of the ${format.toUpperCase()} image; files with data appended (such as an archive) are refused`,
    );
  }
  const options = { failOn: 'error' as const, limitInputPixels: limits.maxPixels };
  try {
    await sharp(file.path, options).stats();
  } catch (err) {
    throw new ImageRejected(`${label}: the ${format.toUpperCase()} data is damaged or truncated and does not decode (${reasonOf(err)})`);
  }
  let thumbnail: Buffer;
  try {
    thumbnail = await makeThumbnail(file.path, limits.maxPixels);
  } catch (err) {
    throw new ImageRejected(`${label}: the image decodes but no thumbnail can be made of it (${reasonOf(err)})`);
  }
  return { width, height, channels: meta.channels ?? 0, format, thumbnail };
}
