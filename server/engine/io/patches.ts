import { EngineInputError } from '../format/engine-input-error';
import type { PixelImage } from './image';

/**
 * A patch is `width` × `height` pixels. Its vector has width·height·channels components in this order:
 * component ((row · width) + column) · channels + channel — rows top to bottom, pixels left to right,
 * and for rgb the three channels R, G, B interleaved per pixel.
 */
export interface PatchShape {
  width: number;
  height: number;
}

export const PATCH_SIDE_MIN = 2;
export const PATCH_SIDE_MAX = 16;

export function checkPatchShape(patch: PatchShape): PatchShape {
  for (const side of ['width', 'height'] as const) {
    const v = patch[side];
    if (!Number.isInteger(v) || v < PATCH_SIDE_MIN || v > PATCH_SIDE_MAX) {
      throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `patch ${side} must be an integer from ${PATCH_SIDE_MIN} to ${PATCH_SIDE_MAX}, got ${v}`, `patch.${side}`);
    }
  }
  return patch;
}

/** Parses "WxH" (or "W×H"; a single "N" means N×N). */
export function parsePatchShape(text: string): PatchShape {
  const m = /^\s*(\d+)\s*(?:[x×X]\s*(\d+))?\s*$/.exec(text);
  if (!m) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `patch must look like WxH (e.g. 4x4), got "${text}"`, 'patch');
  const width = Number(m[1]);
  return checkPatchShape({ width, height: m[2] === undefined ? width : Number(m[2]) });
}

export function vectorDimension(patch: PatchShape, channels: number): number {
  return patch.width * patch.height * channels;
}

/** Non-overlapping block grid covering the image; the last column/row of blocks may hang over the edge. */
export interface BlockGrid {
  blocksX: number;
  blocksY: number;
}

export function blockGrid(width: number, height: number, patch: PatchShape): BlockGrid {
  return { blocksX: Math.ceil(width / patch.width), blocksY: Math.ceil(height / patch.height) };
}

/** Copies the patch at (x0, y0) into `out` at `offset`, replicating the last row/column for pixels beyond the edge. */
function readPatch(image: PixelImage, patch: PatchShape, x0: number, y0: number, out: Float32Array, offset: number): void {
  const { width, height, channels, pixels } = image;
  let k = offset;
  for (let row = 0; row < patch.height; row += 1) {
    const y = Math.min(y0 + row, height - 1);
    for (let col = 0; col < patch.width; col += 1) {
      const base = (y * width + Math.min(x0 + col, width - 1)) * channels;
      for (let c = 0; c < channels; c += 1) out[k++] = pixels[base + c];
    }
  }
}

/**
 * Tiles an image into non-overlapping blocks for coding, in raster order of blocks (left to right, top to bottom).
 * Right and bottom edges are padded by edge replication; `untile` crops the padding again.
 * @returns vectors: blocksX·blocksY × d, row-major
 */
export function tile(image: PixelImage, patch: PatchShape): BlockGrid & { vectors: Float32Array; dimension: number } {
  const grid = blockGrid(image.width, image.height, patch);
  const dimension = vectorDimension(patch, image.channels);
  const vectors = new Float32Array(grid.blocksX * grid.blocksY * dimension);
  let offset = 0;
  for (let by = 0; by < grid.blocksY; by += 1) {
    for (let bx = 0; bx < grid.blocksX; bx += 1) {
      readPatch(image, patch, bx * patch.width, by * patch.height, vectors, offset);
      offset += dimension;
    }
  }
  return { ...grid, vectors, dimension };
}

/**
 * Inverse of `tile`: writes block vectors back into an image raster, dropping the padded pixels.
 * @param vectors  blocksX·blocksY × d, row-major, raster order of blocks
 * @returns        height × width × channels
 */
export function untile<T extends Float32Array | Uint8Array>(
  vectors: T,
  width: number,
  height: number,
  channels: number,
  patch: PatchShape,
  out: T,
): T {
  const { blocksX } = blockGrid(width, height, patch);
  const dimension = vectorDimension(patch, channels);
  for (let y = 0; y < height; y += 1) {
    const by = Math.floor(y / patch.height);
    const row = y - by * patch.height;
    for (let x = 0; x < width; x += 1) {
      const bx = Math.floor(x / patch.width);
      const src = (by * blocksX + bx) * dimension + (row * patch.width + (x - bx * patch.width)) * channels;
      const dst = (y * width + x) * channels;
      for (let c = 0; c < channels; c += 1) out[dst + c] = vectors[src + c];
    }
  }
  return out;
}

/** Patch positions along one axis for training extraction: 0, s, 2s, … while the patch fits; one position if it never fits. */
function positionsAlong(size: number, side: number, stride: number): number {
  return size <= side ? 1 : Math.floor((size - side) / stride) + 1;
}

export interface ExtractOptions {
  /** Step between patch origins in pixels on both axes; defaults to the patch size on each axis (non-overlapping). */
  stride?: number;
  /** Cap on the number of vectors; drawn at random with `rng`, spread over images in proportion to their area. */
  sample?: number;
  rng?: { nextInt(n: number): number };
}

export interface ExtractedVectors {
  vectors: Float32Array; // N × d, row-major; images in the given order, positions in raster order within each image
  dimension: number;
  count: number;
  /** Vectors taken from each image, in the given order. */
  perImage: number[];
}

/**
 * Splits `total` into integer quotas proportional to `weights` (largest remainder), never above `caps`;
 * what a capped image cannot take is re-spread over the others in proportion to their weights.
 */
export function proportionalQuotas(total: number, weights: number[], caps: number[]): number[] {
  const quotas = weights.map(() => 0);
  let remaining = Math.min(total, caps.reduce((a, b) => a + b, 0));
  let open = weights.map((_, i) => i).filter((i) => caps[i] > 0);
  while (remaining > 0 && open.length > 0) {
    const weightSum = open.reduce((a, i) => a + weights[i], 0);
    const shares = open.map((i) => ({ i, exact: (remaining * weights[i]) / weightSum }));
    let given = 0;
    for (const s of shares) {
      const whole = Math.min(Math.floor(s.exact), caps[s.i] - quotas[s.i]);
      quotas[s.i] += whole;
      given += whole;
    }
    // Hand out what flooring left over by largest fractional part; ties to the earlier image for a fixed result.
    const order = shares
      .filter((s) => quotas[s.i] < caps[s.i])
      .sort((a, b) => (b.exact - Math.floor(b.exact)) - (a.exact - Math.floor(a.exact)) || a.i - b.i);
    for (const s of order) {
      if (given >= remaining) break;
      quotas[s.i] += 1;
      given += 1;
    }
    remaining -= given;
    open = open.filter((i) => quotas[i] < caps[i]);
  }
  return quotas;
}

/** k distinct integers from 0..n-1 (partial Fisher–Yates with a sparse swap table), returned sorted ascending. */
function sampleDistinct(n: number, k: number, rng: { nextInt(n: number): number }): Uint32Array {
  const swapped = new Map<number, number>();
  const picked = new Uint32Array(k);
  for (let i = 0; i < k; i += 1) {
    const j = i + rng.nextInt(n - i);
    const vj = swapped.get(j) ?? j;
    swapped.set(j, swapped.get(i) ?? i);
    picked[i] = vj;
  }
  return picked.sort();
}

/**
 * Training vectors from a set of images: patches at every `stride` pixels (edge-replicated where an image is smaller
 * than the patch), optionally a seeded random subset of at most `sample` vectors spread across images by area.
 */
export function extractTrainingVectors(images: PixelImage[], patch: PatchShape, options: ExtractOptions = {}): ExtractedVectors {
  if (images.length === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'no images to extract training vectors from');
  checkPatchShape(patch);
  const channels = images[0].channels;
  for (const img of images) {
    if (img.channels !== channels) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${img.name}: mixed colour modes in one training set`);
  }
  const stride = options.stride;
  if (stride !== undefined && (!Number.isInteger(stride) || stride < 1)) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `stride must be a positive integer, got ${stride}`, 'stride');
  }
  const sx = stride ?? patch.width;
  const sy = stride ?? patch.height;
  const grids = images.map((img) => ({ nx: positionsAlong(img.width, patch.width, sx), ny: positionsAlong(img.height, patch.height, sy) }));
  const counts = grids.map((g) => g.nx * g.ny);
  const available = counts.reduce((a, b) => a + b, 0);

  let chosen: (Uint32Array | null)[]; // null: every position of that image
  if (options.sample === undefined || options.sample >= available) {
    chosen = images.map(() => null);
  } else {
    if (!Number.isInteger(options.sample) || options.sample < 1) {
      throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `sample must be a positive integer, got ${options.sample}`, 'sample');
    }
    if (!options.rng) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'sampling needs a seeded random generator');
    const rng = options.rng;
    const quotas = proportionalQuotas(options.sample, images.map((img) => img.width * img.height), counts);
    chosen = quotas.map((q, i) => sampleDistinct(counts[i], q, rng));
  }

  const perImage = chosen.map((c, i) => (c === null ? counts[i] : c.length));
  const count = perImage.reduce((a, b) => a + b, 0);
  const dimension = vectorDimension(patch, channels);
  const vectors = new Float32Array(count * dimension);
  let offset = 0;
  images.forEach((img, i) => {
    const { nx } = grids[i];
    const take = (position: number) => {
      const px = position % nx;
      const py = (position - px) / nx;
      readPatch(img, patch, px * sx, py * sy, vectors, offset);
      offset += dimension;
    };
    const list = chosen[i];
    if (list === null) for (let p = 0; p < counts[i]; p += 1) take(p);
    else for (const p of list) take(p);
  });
  return { vectors, dimension, count, perImage };
}
