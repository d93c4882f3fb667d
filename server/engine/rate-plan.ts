/**
 * Planning a codec before training: which configurations (patch shape × index bits b × mean bits × structure) reach
 * a target rate, what table each stores and how many training vectors each codeword would get from a set of images.
 * Pure arithmetic over the run vocabulary, shared by the studio's rate planner (through server/contracts) and
 * anything else that plans; a structure brings its own rate rule, so a new one is one entry in PLAN_STRUCTURES.
 */
import { BITS, MEAN_BITS, MIN_VECTORS_PER_CODEWORD, parseStages, patchPositions, PATCH_SIDE, RESIDUAL_DEFAULT_STAGES, RUN_DEFAULTS, RUN_STRUCTURE_LABELS, type ColorMode } from './vocabulary';

export { MIN_VECTORS_PER_CODEWORD };

/** A codebook structure as the planner sees it: the bits a block costs and the codewords its table stores. */
export interface RateStructure {
  id: string;
  label: string;
  /** The mean bits m this structure codes beside each index ([0] for a structure that codes no mean). */
  meanBits: readonly number[];
  /** Bits one block costs at index bits b and mean bits m. */
  blockBits(b: number, meanBits: number): number;
  /** Codewords the decoder stores for index bits b. */
  codewords(b: number): number;
  /** Cells the training vectors are spread over for index bits b (the vectors per codeword divide by it); default the table. */
  trainedCells?(b: number): number;
  /** The index bits this structure can have (default the vocabulary's BITS). */
  minBits?: number;
  maxBits?: number;
}

const range = (from: number, to: number) => Array.from({ length: to - from + 1 }, (_, i) => from + i);

/**
 * Full search: one table of 2^b codewords, a b-bit index per block: (b + m)/(w·h) bits per pixel with m = 0.
 * Mean-removed: the block mean coded apart in m bits (1 … MEAN_BITS.max) and the residual by the same table:
 * (b + m)/(w·h). Both are fixed-length rates (common practice for block VQ; the rule metrics/rate.ts measures).
 */
export const PLAN_STRUCTURES = {
  full: { id: 'full', label: 'Full search', meanBits: [0], blockBits: (b: number, m: number) => b + m, codewords: (b: number) => 2 ** b },
  'mean-removed': {
    id: 'mean-removed',
    label: 'Mean-removed',
    meanBits: range(Math.max(1, MEAN_BITS.min), MEAN_BITS.max),
    blockBits: (b: number, m: number) => b + m,
    codewords: (b: number) => 2 ** b,
  },
  /**
   * Tree balanced to depth b: the same b-bit index (a path), a table of every node, 2^(b+1) − 1 codewords, which the
   * table limit of 2^BITS.max entries holds up to depth BITS.max − 1; the training vectors end up spread over its 2^b leaves.
   */
  tree: {
    id: 'tree', label: RUN_STRUCTURE_LABELS.tree, meanBits: [0], blockBits: (b: number, m: number) => b + m,
    codewords: (b: number) => 2 ** (b + 1) - 1, trainedCells: (b: number) => 2 ** b, maxBits: BITS.max - 1,
  },
  /**
   * Residual, RESIDUAL_DEFAULT_STAGES stages sharing b as the CLI's --stages S does (parseStages): the sum of the
   * stage tables, each trained on every vector, so the largest stage sets the vectors per codeword.
   */
  residual: {
    id: 'residual', label: `${RUN_STRUCTURE_LABELS.residual}, ${RESIDUAL_DEFAULT_STAGES} stages`, meanBits: [0], blockBits: (b: number, m: number) => b + m,
    codewords: (b: number) => stageBitsOf(b).reduce((n, s) => n + 2 ** s, 0), trainedCells: (b: number) => 2 ** Math.max(...stageBitsOf(b)), minBits: RESIDUAL_DEFAULT_STAGES,
  },
} as const satisfies Record<string, RateStructure>;

function stageBitsOf(b: number): number[] {
  const r = parseStages(String(RESIDUAL_DEFAULT_STAGES), b);
  return 'bits' in r ? r.bits : [b];
}
export type PlanStructureId = keyof typeof PLAN_STRUCTURES;

/**
 * A configuration reaches the target when it spends at most the target and at least this fraction below it: whole
 * index bits move the rate in steps of 1/(w·h) bpp, so an exact hit is rare. 10 % is a judgement, not a published rule.
 */
export const PLAN_TOLERANCE = 0.1;

/**
 * The patch shapes planned by default: every square side, and each 1:2 and 2:1 rectangle, within PATCH_SIDE (the
 * shapes block coders commonly use; any other list may be given).
 */
export const PLAN_PATCHES: readonly { width: number; height: number }[] = (() => {
  const out: { width: number; height: number }[] = [];
  for (let s = PATCH_SIDE.min; s <= PATCH_SIDE.max; s += 1) {
    out.push({ width: s, height: s });
    if (2 * s <= PATCH_SIDE.max) out.push({ width: 2 * s, height: s }, { width: s, height: 2 * s });
  }
  return out;
})();

export interface PlanRequest {
  /** The rate to reach, in bits per pixel (> 0). */
  targetBpp: number;
  color: ColorMode;
  /** The training images' sizes; empty when no set is chosen (then no vector counts). */
  images: readonly { width: number; height: number }[];
  /** Training patch step in pixels; default the patch side (non-overlapping). */
  stride?: number;
  /** The vector cap; default the run default. */
  maxVectors?: number;
  patches?: readonly { width: number; height: number }[];
  structures?: readonly RateStructure[];
  tolerance?: number;
}

export interface PlanRow {
  structure: string;
  structureLabel: string;
  patch: { width: number; height: number };
  bits: number;
  meanBits: number;
  /** Fixed-length rate: blockBits / (w·h). */
  bpp: number;
  codewords: number;
  /** d = w·h·channels components per codeword. */
  dimension: number;
  /** The table as float32 (4 bytes a component), as the engine trains and exports it. */
  tableBytes: number;
  /** Training vectors: the images' patches at the stride, at most the vector cap; null without images. */
  trainingVectors: number | null;
  vectorsPerCodeword: number | null;
  /** Fewer than MIN_VECTORS_PER_CODEWORD vectors a codeword (or fewer vectors than codewords): the table would be under-trained. */
  fewVectors: boolean;
}

/** Training vectors a set of images gives for a patch shape: patches at the stride, capped. */
export function planTrainingVectors(images: readonly { width: number; height: number }[], patch: { width: number; height: number }, stride?: number, maxVectors: number = RUN_DEFAULTS.maxVectors): number {
  const available = images.reduce((n, img) => n + patchPositions(img.width, img.height, patch, stride), 0);
  return Math.min(available, maxVectors);
}

/** The largest b in BITS whose rate is at most the target, or null when even b = BITS.min costs more. */
function largestBitsWithin(structure: RateStructure, meanBits: number, pixels: number, targetBpp: number): number | null {
  // A tiny allowance so a rate that equals the target in exact arithmetic is not lost to rounding.
  const limit = targetBpp * (1 + 1e-12);
  for (let b = structure.maxBits ?? BITS.max; b >= (structure.minBits ?? BITS.min); b -= 1) if (structure.blockBits(b, meanBits) / pixels <= limit) return b;
  return null;
}

/**
 * Every configuration that reaches the target rate: for each patch shape, structure and mean bits, the largest b
 * that spends at most the target, kept when it spends at least (1 − tolerance) of it. Closest to the target first,
 * then the smaller table.
 */
export function planRates(request: PlanRequest): PlanRow[] {
  const { targetBpp } = request;
  if (!(targetBpp > 0) || !Number.isFinite(targetBpp)) return [];
  const channels = request.color === 'rgb' ? 3 : 1;
  const tolerance = request.tolerance ?? PLAN_TOLERANCE;
  const rows: PlanRow[] = [];
  for (const patch of request.patches ?? PLAN_PATCHES) {
    const pixels = patch.width * patch.height;
    const dimension = pixels * channels;
    const vectors = request.images.length > 0 ? planTrainingVectors(request.images, patch, request.stride, request.maxVectors) : null;
    for (const structure of (request.structures ?? Object.values(PLAN_STRUCTURES)) as readonly RateStructure[]) {
      for (const meanBits of structure.meanBits) {
        const bits = largestBitsWithin(structure, meanBits, pixels, targetBpp);
        if (bits === null) continue;
        const bpp = structure.blockBits(bits, meanBits) / pixels;
        if (bpp < (1 - tolerance) * targetBpp) continue;
        const codewords = structure.codewords(bits);
        const perCodeword = vectors === null ? null : vectors / (structure.trainedCells?.(bits) ?? codewords);
        rows.push({
          structure: structure.id,
          structureLabel: structure.label,
          patch: { ...patch },
          bits,
          meanBits,
          bpp,
          codewords,
          dimension,
          tableBytes: codewords * dimension * 4,
          trainingVectors: vectors,
          vectorsPerCodeword: perCodeword,
          fewVectors: perCodeword !== null && perCodeword < MIN_VECTORS_PER_CODEWORD,
        });
      }
    }
  }
  return rows.sort((a, b) => Math.abs(a.bpp - targetBpp) - Math.abs(b.bpp - targetBpp) || a.tableBytes - b.tableBytes);
}
