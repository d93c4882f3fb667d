import { BITS, PATCH_SIDE, patchPositions, RUN_DEFAULTS, STRIDE, type ColorMode, type Image } from '../../../server/contracts';
import { groupDigits } from './format';

/** What the form knows about the team's images: every set's images, by set id. */
export type ImageCatalog = ReadonlyMap<number, readonly Image[]>;

export type ImageSource = { by: 'set'; setId: number | null } | { by: 'images'; imageIds: readonly number[] };

export type PlanInput = {
  training: ImageSource;
  heldOut: ImageSource;
  patch: { width: number; height: number };
  /** null: the patch side (non-overlapping). */
  stride: number | null;
  color: ColorMode;
  meanBits: number;
  bits: { from: number; to: number };
  maxVectors: number;
};

export type SizePlan = {
  bits: number;
  /** K = 2^b codewords. */
  size: number;
  /** (b + m) / (w·h): the fixed-length rate, index bits plus mean bits per block over the block's pixels. */
  bppFixed: number;
  /** K · d · 4: the codewords stored as float32, as the engine trains and exports them. */
  bytesFloat32: number;
  /** K · d: the codewords rounded to 8-bit samples, as firmware tables usually hold them. */
  bytes8: number;
};

export type PlanProblem = { field: 'training' | 'heldOut' | 'bits'; message: string };

export type RunPlan = {
  channels: 1 | 3;
  /** d = w · h · channels. */
  dimension: number;
  sizes: SizePlan[];
  training: Image[];
  heldOut: Image[];
  /** Patches in the training images at the chosen stride (the patch side unless one is chosen). */
  availableVectors: number;
  /** What training actually uses: availableVectors capped by maxVectors. */
  trainingVectors: number;
  problems: PlanProblem[];
};

/**
 * Patches of one image, by the run vocabulary's rule (stride default: the patch side) — the server's count, so the
 * estimate and the server's "too few vectors" check agree.
 */
export function patchesIn(image: { width: number; height: number }, patch: { width: number; height: number }, stride?: number | null): number {
  return patchPositions(image.width, image.height, patch, stride ?? undefined);
}

function allImages(catalog: ImageCatalog): Map<number, Image> {
  const byId = new Map<number, Image>();
  for (const images of catalog.values()) for (const image of images) byId.set(image.id, image);
  return byId;
}

/**
 * The images each side of a run gets, by the server's rule: one set on both sides is divided by its images' own
 * roles; a set named on one side only gives that side all of its images; chosen images are taken as chosen.
 */
export function resolveImages(training: ImageSource, heldOut: ImageSource, catalog: ImageCatalog): { training: Image[]; heldOut: Image[] } {
  const byId = allImages(catalog);
  const pick = (source: ImageSource): Image[] => {
    if (source.by === 'images') return source.imageIds.flatMap((id) => byId.get(id) ?? []);
    return source.setId === null ? [] : [...(catalog.get(source.setId) ?? [])];
  };
  if (training.by === 'set' && heldOut.by === 'set' && training.setId !== null && training.setId === heldOut.setId) {
    const images = catalog.get(training.setId) ?? [];
    return { training: images.filter((i) => i.role === 'training'), heldOut: images.filter((i) => i.role === 'held-out') };
  }
  return { training: pick(training), heldOut: pick(heldOut) };
}

const validBits = (b: number) => Number.isInteger(b) && b >= BITS.min && b <= BITS.max;
const validSide = (s: number) => Number.isInteger(s) && s >= PATCH_SIDE.min && s <= PATCH_SIDE.max;
const validStride = (s: number | null): s is number => s !== null && Number.isInteger(s) && s >= STRIDE.min && s <= STRIDE.max;

export function planRun(input: PlanInput, catalog: ImageCatalog): RunPlan {
  const channels = input.color === 'rgb' ? 3 : 1;
  const geometryKnown = validSide(input.patch.width) && validSide(input.patch.height);
  const pixels = geometryKnown ? input.patch.width * input.patch.height : 0;
  const dimension = pixels * channels;
  const meanBits = Number.isInteger(input.meanBits) && input.meanBits >= 0 ? input.meanBits : 0;

  const sizes: SizePlan[] = [];
  if (geometryKnown && validBits(input.bits.from) && validBits(input.bits.to) && input.bits.from <= input.bits.to) {
    for (let b = input.bits.from; b <= input.bits.to; b += 1) {
      const size = 2 ** b;
      sizes.push({ bits: b, size, bppFixed: (b + meanBits) / pixels, bytesFloat32: size * dimension * 4, bytes8: size * dimension });
    }
  }

  const { training, heldOut } = resolveImages(input.training, input.heldOut, catalog);
  const availableVectors = geometryKnown ? training.reduce((n, image) => n + patchesIn(image, input.patch, validStride(input.stride) ? input.stride : null), 0) : 0;
  const cap = Number.isInteger(input.maxVectors) && input.maxVectors > 0 ? input.maxVectors : RUN_DEFAULTS.maxVectors;
  const trainingVectors = Math.min(availableVectors, cap);

  const problems: PlanProblem[] = [];
  if (input.training.by === 'set' && input.training.setId === null) problems.push({ field: 'training', message: 'Choose the set to train on.' });
  else if (training.length === 0) problems.push({ field: 'training', message: 'No training images: the chosen set has none marked training, or none are picked.' });
  if (input.heldOut.by === 'set' && input.heldOut.setId === null) problems.push({ field: 'heldOut', message: 'Choose the set to measure on.' });
  else if (heldOut.length === 0) {
    problems.push({ field: 'heldOut', message: 'No held-out images: a codebook can only be judged on images it never saw. Mark some held-out or split the set.' });
  }

  // Compared by content as well as by id, as the server does: a copy of a training image would flatter the results.
  const trainingIds = new Set(training.map((i) => i.id));
  const trainingHashes = new Set(training.map((i) => i.sha256));
  const both = heldOut.filter((i) => trainingIds.has(i.id) || trainingHashes.has(i.sha256));
  if (both.length > 0) {
    const names = both.slice(0, 3).map((i) => i.fileName).join(', ');
    problems.push({
      field: 'heldOut',
      message: `${both.length === 1 ? 'An image is' : `${both.length} images are`} both training and held-out (${names}${both.length > 3 ? ', …' : ''}); an image is either trained on or held out.`,
    });
  }

  const largest = sizes.at(-1);
  if (largest && training.length > 0 && trainingVectors < largest.size) {
    problems.push({
      field: 'bits',
      message: `b = ${largest.bits} means ${groupDigits(largest.size)} codewords, so training needs at least ${groupDigits(largest.size)} vectors, but the training images give ${groupDigits(trainingVectors)} patches of ${input.patch.width}×${input.patch.height}. Lower b, use smaller patches or add training images.`,
    });
  }

  return { channels, dimension, sizes, training, heldOut, availableVectors, trainingVectors, problems };
}
