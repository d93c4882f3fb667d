import type { Codebook } from '../format/codebook-schema';
import { encodeImage, reconstruct } from '../format/codec';
import type { PixelImage } from '../io/image';
import { psnrFromMse, sumSquaredError } from '../metrics/distortion';
import { withFixedPointCodewords, type FixedPointTable } from './fixed-point';

export interface RoundingCostImage {
  name: string;
  /** PSNR of the engine's decoder (float codewords) and of the firmware table's, against the image; +∞ when exact */
  psnrFloat: number;
  psnrFixed: number;
  /** psnrFloat − psnrFixed in dB (0 when both are exact or equal) */
  costDb: number;
  /** output components (pixel × channel) on which the two decoders differ */
  differing: number;
}

export interface RoundingCost {
  images: RoundingCostImage[];
  /** over every component of every image, as evaluation pools */
  psnrFloat: number;
  psnrFixed: number;
  costDb: number;
  differing: number;
}

function cost(a: number, b: number): number {
  return a === b ? 0 : a - b;
}

/**
 * The PSNR cost of the firmware table's rounding: each image is coded once (float search, as the studio codes it),
 * then decoded with the float codewords and with the fixed-point ones, and both are measured against the image.
 */
export async function measureFixedPointCost(
  codebook: Codebook,
  table: FixedPointTable,
  images: PixelImage[],
  options: { threads?: number; signal?: AbortSignal } = {},
): Promise<RoundingCost> {
  const fixedBook = withFixedPointCodewords(codebook, table);
  const results: RoundingCostImage[] = [];
  let [sseFloat, sseFixed, components, differing] = [0, 0, 0, 0];
  for (const image of images) {
    const encoded = await encodeImage(codebook, image, options);
    const floatOut = reconstruct(codebook, encoded);
    const fixedOut = reconstruct(fixedBook, encoded);
    const [a, b] = [sumSquaredError(image.pixels, floatOut), sumSquaredError(image.pixels, fixedOut)];
    let diff = 0;
    for (let i = 0; i < floatOut.length; i += 1) if (floatOut[i] !== fixedOut[i]) diff += 1;
    const n = image.pixels.length;
    const [psnrFloat, psnrFixed] = [psnrFromMse(a / n), psnrFromMse(b / n)];
    results.push({ name: image.name, psnrFloat, psnrFixed, costDb: cost(psnrFloat, psnrFixed), differing: diff });
    [sseFloat, sseFixed, components, differing] = [sseFloat + a, sseFixed + b, components + n, differing + diff];
  }
  const psnrFloat = psnrFromMse(components ? sseFloat / components : 0);
  const psnrFixed = psnrFromMse(components ? sseFixed / components : 0);
  return { images: results, psnrFloat, psnrFixed, costDb: cost(psnrFloat, psnrFixed), differing };
}
