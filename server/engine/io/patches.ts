import { EngineInputError } from '../input-error';
import type { CodableImage, PixelImage } from './image';
import { positionsAlong } from '../vocabulary';

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
function readPatch(image: CodableImage, patch: PatchShape, x0: number, y0: number, out: Float32Array, offset: number): void {
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
 * Blocks that lie wholly inside the image are copied row by row without the edge clamping; `shared` allocates the
 * vectors in a SharedArrayBuffer (for worker threads to read without a copy).
 * @returns vectors: blocksX·blocksY × d, row-major
 */
export function tile(image: CodableImage, patch: PatchShape, options: { shared?: boolean } = {}): BlockGrid & { vectors: Float32Array; dimension: number } {
  const grid = blockGrid(image.width, image.height, patch);
  const dimension = vectorDimension(patch, image.channels);
  const count = grid.blocksX * grid.blocksY * dimension;
  const vectors = options.shared ? new Float32Array(new SharedArrayBuffer(count * 4)) : new Float32Array(count);
  const { width, channels, pixels } = image;
  const rowLength = patch.width * channels;
  const fullX = Math.floor(image.width / patch.width);
  const fullY = Math.floor(image.height / patch.height);
  let offset = 0;
  for (let by = 0; by < grid.blocksY; by += 1) {
    for (let bx = 0; bx < grid.blocksX; bx += 1) {
      if (bx < fullX && by < fullY) {
        let k = offset;
        for (let row = 0; row < patch.height; row += 1) {
          const src = ((by * patch.height + row) * width + bx * patch.width) * channels;
          for (let i = 0; i < rowLength; i += 1) vectors[k++] = pixels[src + i];
        }
      } else {
        readPatch(image, patch, bx * patch.width, by * patch.height, vectors, offset);
      }
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
  const rowLength = patch.width * channels;
  // Per image row, each block's row of pixels, cropped at the right edge.
  for (let y = 0; y < height; y += 1) {
    const by = Math.floor(y / patch.height);
    const row = y - by * patch.height;
    let dst = y * width * channels;
    for (let bx = 0; bx < blocksX; bx += 1) {
      const src = (by * blocksX + bx) * dimension + row * rowLength;
      const len = Math.min(rowLength, (width - bx * patch.width) * channels);
      for (let i = 0; i < len; i += 1) out[dst + i] = vectors[src + i];
      dst += len;
    }
  }
  return out;
}

// The patches-per-image rule is the run vocabulary's, shared with the studio's estimate and the run form.
export { patchPositions } from '../vocabulary';

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

/** What the sampler must know of an image before decoding it: its size, and a name for messages. */
export interface ImageSize {
  name: string;
  width: number;
  height: number;
}

/**
 * Which patches training takes from each image, decided from the images' sizes alone, before any pixel is decoded:
 * the per-image quotas and the positions drawn for them. The draws happen here, image by image in order, so the
 * sample for a seed is the same whether the images are then decoded all at once or one at a time.
 */
export interface SamplePlan {
  patch: PatchShape;
  channels: number;
  dimension: number;
  /** Vectors in all, and from each image in the given order. */
  count: number;
  perImage: number[];
  /** Steps between patch origins on each axis. */
  stepX: number;
  stepY: number;
  /** Patch positions along x per image (a position p is at column p mod nx, row ⌊p / nx⌋). */
  columns: number[];
  /** Positions taken per image, ascending; null: all of them. */
  chosen: (Uint32Array | null)[];
}

export function planTrainingSample(images: ImageSize[], channels: number, patch: PatchShape, options: ExtractOptions = {}): SamplePlan {
  if (images.length === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'no images to extract training vectors from');
  checkPatchShape(patch);
  const stride = options.stride;
  if (stride !== undefined && (!Number.isInteger(stride) || stride < 1)) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `stride must be a positive integer, got ${stride}`, 'stride');
  }
  const stepX = stride ?? patch.width;
  const stepY = stride ?? patch.height;
  const columns = images.map((img) => positionsAlong(img.width, patch.width, stepX));
  const counts = images.map((img, i) => columns[i] * positionsAlong(img.height, patch.height, stepY));
  const available = counts.reduce((a, b) => a + b, 0);

  let chosen: (Uint32Array | null)[];
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
  return {
    patch,
    channels,
    dimension: vectorDimension(patch, channels),
    count: perImage.reduce((a, b) => a + b, 0),
    perImage,
    stepX,
    stepY,
    columns,
    chosen,
  };
}

/**
 * Copies the planned patches of image `index` into `out` from `offset` (vectors in the plan's order);
 * returns the offset after them.
 */
export function takePlannedVectors(plan: SamplePlan, index: number, image: PixelImage, out: Float32Array, offset: number): number {
  const nx = plan.columns[index];
  const d = plan.dimension;
  let at = offset;
  const take = (position: number) => {
    const px = position % nx;
    const py = (position - px) / nx;
    readPatch(image, plan.patch, px * plan.stepX, py * plan.stepY, out, at);
    at += d;
  };
  const list = plan.chosen[index];
  if (list === null) for (let p = 0; p < plan.perImage[index]; p += 1) take(p);
  else for (const p of list) take(p);
  return at;
}

/**
 * Training vectors from a set of images: patches at every `stride` pixels (edge-replicated where an image is smaller
 * than the patch), optionally a seeded random subset of at most `sample` vectors spread across images by area.
 */
export function extractTrainingVectors(images: PixelImage[], patch: PatchShape, options: ExtractOptions = {}): ExtractedVectors {
  if (images.length === 0) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'no images to extract training vectors from');
  const channels = images[0].channels;
  for (const img of images) {
    if (img.channels !== channels) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${img.name}: mixed colour modes in one training set`);
  }
  const plan = planTrainingSample(images, channels, patch, options);
  const vectors = new Float32Array(plan.count * plan.dimension);
  let offset = 0;
  images.forEach((img, i) => {
    offset = takePlannedVectors(plan, i, img, vectors, offset);
  });
  return { vectors, dimension: plan.dimension, count: plan.count, perImage: plan.perImage };
}

/** An image the streaming sampler decodes when its turn comes. */
export interface TrainingImageSource extends ImageSize {
  /** Decodes the image; its size must be the one declared (the sample was drawn from it). */
  decode(): Promise<PixelImage>;
  /** Called once the sampler has taken this image's vectors and holds its pixels no longer (not after a failed decode). */
  release?(): void;
}

export interface StreamOptions extends ExtractOptions {
  /** Channels every image must have (1 luma, 3 rgb). */
  channels: number;
  /** Makes the N × d output; defaults to a plain Float32Array. A caller may charge a budget or use shared memory. */
  allocate?: (length: number) => Float32Array;
  signal?: AbortSignal;
}

/**
 * The same vectors as extractTrainingVectors for the same images and random sequence, but with the images decoded
 * one at a time: plan from the sizes (every random draw), allocate the output once, then per image decode → copy its
 * patches → drop its pixels. Peak memory is the output plus one decoded image, whatever the number of images.
 */
export async function streamTrainingVectors(sources: TrainingImageSource[], patch: PatchShape, options: StreamOptions): Promise<ExtractedVectors> {
  const plan = planTrainingSample(sources, options.channels, patch, options);
  const vectors = options.allocate ? options.allocate(plan.count * plan.dimension) : new Float32Array(plan.count * plan.dimension);
  if (vectors.length !== plan.count * plan.dimension) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', 'allocate returned an array of the wrong length');
  let offset = 0;
  for (const [i, source] of sources.entries()) {
    options.signal?.throwIfAborted();
    const image = await source.decode();
    try {
      if (image.width !== source.width || image.height !== source.height) {
        throw new EngineInputError('ENGINE_INVALID_IMAGE', `${source.name}: decoded as ${image.width}×${image.height}, but its size was given as ${source.width}×${source.height}`);
      }
      if (image.channels !== options.channels) throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `${source.name}: mixed colour modes in one training set`);
      offset = takePlannedVectors(plan, i, image, vectors, offset);
    } finally {
      source.release?.();
    }
  }
  return { vectors, dimension: plan.dimension, count: plan.count, perImage: plan.perImage };
}
