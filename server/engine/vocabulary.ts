/**
 * The run vocabulary: the names, labels, limits and defaults of a training run, written once. The engine, the HTTP
 * contracts (and through them the client), the command line and the codebook format all import these. This module
 * depends on zod alone, so the contracts can share it without pulling in the engine (sharp, workers).
 */
import { z } from 'zod';

// ---- codebook initialisation ----

/** Init identifiers as the API, the CLI and the codebook format write them. */
export const INIT = { split: 'split', kmeansPlusPlus: 'kmeans++', random: 'random' } as const;
/** Every init, the default first: the order the run form and the CLI help offer them in. */
export const INIT_METHODS = [INIT.split, INIT.kmeansPlusPlus, INIT.random] as const;
export type InitMethod = (typeof INIT_METHODS)[number];

/** What each init is called wherever a person reads it (run form, run page, compare page, CLI help). */
export const INIT_LABELS: Record<InitMethod, string> = {
  split: 'LBG splitting',
  'kmeans++': 'k-means++ seeding',
  // It starts from K training vectors drawn at random, not from random values.
  random: 'Random training vectors',
};
/** One line on what each init does, for the run form's options and the CLI help. */
export const INIT_HINTS: Record<InitMethod, string> = {
  split: 'grows 1, 2, 4, … codewords, keeping every size',
  'kmeans++': 'spreads the starting codewords by distance',
  random: 'starts from K training vectors drawn at random',
};

const quoted = INIT_METHODS.map((m) => `"${m}"`);
export const initMethodSchema = z.enum(INIT_METHODS, { error: `expected ${quoted.slice(0, -1).join(', ')} or ${quoted.at(-1)}` });

/** Split init trains every size 1, 2, 4, … up to K in one pass; the others train K alone. */
export const trainsEverySize = (init: InitMethod): boolean => init === INIT.split;

// ---- colour ----
export const COLOR_MODES = ['luma', 'rgb'] as const;
export type ColorMode = (typeof COLOR_MODES)[number];

// ---- limits (inclusive unless said otherwise) ----

/** Index bits b per block: codebooks of 2^b codewords. 14 keeps the largest codebook (2^14) searchable in the studio. */
export const BITS = { min: 0, max: 14 } as const;
/** Patch width and height in pixels. */
export const PATCH_SIDE = { min: 2, max: 16 } as const;
/**
 * Step between training patches in pixels (field `stride`, CLI --stride); absent: the patch side (non-overlapping).
 * A step below the side overlaps patches (more vectors from the same images); above it skips pixels. Up to the largest
 * patch side, so every pixel row can still be reached.
 */
export const STRIDE = { min: 1, max: 16 } as const;
/** Bits of the coded block mean; 0 means no mean removal. */
export const MEAN_BITS = { min: 0, max: 8 } as const;
/**
 * Seeds, for the API, the CLI and the engine alike. 0 … 2^31 − 1: every run stored so far holds a seed in it, and
 * it fits a signed 32-bit integer wherever a seed is written down again (a database INT, a C int32_t in firmware
 * tooling, a Java int). The generator mixes in all of a seed's bits, so a wider range would add nothing.
 */
export const SEED = { min: 0, max: 2 ** 31 - 1 } as const;
/**
 * Training vectors at most (the "vector cap", field `maxVectors`, CLI --vector-cap): below 100 no codebook is worth
 * training; 2,000,000 bounds the memory one training holds (TRAINING_MAX_BYTES checks the rest).
 */
export const VECTOR_CAP = { min: 100, max: 2_000_000 } as const;
/**
 * Lloyd iterations per codebook size ("maximum iterations", field `maxIterations`, CLI --max-iterations). 0 trains
 * no pass beyond the starting codebook, which the CLI and the engine allow; a studio run iterates at least once.
 * The format records a trace entry per pass, and 1000 bounds it; Lloyd passes converge in tens of iterations.
 */
export const ITERATIONS = { min: 0, runMin: 1, max: 1000 } as const;
/**
 * ε, the relative drop in distortion below which training stops. The engine and CLI take 0 … 1 (0: until the
 * distortion stops dropping); a studio run takes above 0, at most 0.1.
 */
export const EPSILON = { min: 0, max: 1, runMax: 0.1 } as const;

/**
 * Training vectors per codeword below which a codebook is under-trained: most cells are then fitted to a few
 * vectors, and the held-out distortion drifts well above the training one. 40 is a rule of thumb (common practice,
 * quoted from memory), not a published bound; the rate planner warns below it.
 */
export const MIN_VECTORS_PER_CODEWORD = 40;

// ---- defaults of every optional run setting ----
export const RUN_DEFAULTS = {
  color: 'luma',
  meanBits: 0,
  init: INIT.split,
  epsilon: 1e-4,
  maxIterations: 100,
  maxVectors: 200_000,
  seed: 1,
} as const satisfies { color: ColorMode; init: InitMethod; [key: string]: unknown };

// ---- what a person reads for each setting ----
export const SETTING_LABELS = {
  init: 'Initialisation',
  epsilon: 'ε (stop threshold)',
  maxIterations: 'Maximum iterations',
  maxVectors: 'Vector cap',
  seed: 'Seed',
  patch: 'Patch',
  color: 'Colour',
  meanBits: 'Mean removal',
  stride: 'Patch stride',
  bits: 'Index bits b',
  sizes: 'Codebook sizes',
  trainingImageIds: 'Training images',
  heldOutImageIds: 'Held-out images',
} as const;

/** Labels of a run configuration's keys flattened with dots (the compare page's rows), as the run page names them. */
export const CONFIG_KEY_LABELS: Record<string, string> = {
  ...SETTING_LABELS,
  'patch.width': 'Patch width',
  'patch.height': 'Patch height',
  'bits.from': 'Lowest b',
  'bits.to': 'Highest b',
};

// ---- what a person reads for a run's or job's state (badge, home page, run page, compare picker, CLI, e-mail) ----

/** The states a job (and so a run) moves through; the API spells them as the keys, people read the labels. */
export const RUN_STATES = ['queued', 'running', 'succeeded', 'failed', 'cancelled'] as const;
export type RunStateName = (typeof RUN_STATES)[number];
export const RUN_STATE_LABELS: Record<RunStateName, string> = {
  queued: 'Queued',
  running: 'Running',
  succeeded: 'Finished',
  failed: 'Failed',
  cancelled: 'Cancelled',
};

// ---- exact reconstruction (MSE = 0, PSNR = +∞) ----

/**
 * One spelling per medium: people read "∞ (exact)", CSV files carry `inf` (what NumPy's and pandas' float parsers
 * read back as +∞), JSON carries null (it has no spelling for +∞). Common practice; the engine keeps +Infinity.
 */
export const EXACT = { text: '∞ (exact)', csv: 'inf', json: null } as const;

// ---- Bjøntegaard deltas (BD-rate, BD-PSNR) ----

/**
 * How each curve is drawn through its points before the two are integrated over the interval they share:
 * - `cubic`: the cubic polynomial of G. Bjøntegaard, "Calculation of average PSNR differences between RD-curves",
 *   ITU-T VCEG-M33 (2001), fitted by least squares when a curve has more than four points;
 * - `pchip`: the piecewise-cubic Hermite interpolant with the monotone slopes of F. N. Fritsch and R. E. Carlson,
 *   "Monotone piecewise cubic interpolation", SIAM J. Numer. Anal. 17 (1980), the variant common practice uses today.
 */
export const BD_METHODS = ['pchip', 'cubic'] as const;
export type BdMethod = (typeof BD_METHODS)[number];
export const BD_METHOD_LABELS: Record<BdMethod, string> = {
  pchip: 'piecewise cubic (monotone Hermite, Fritsch–Carlson 1980)',
  cubic: 'cubic polynomial fit (VCEG-M33, Bjøntegaard 2001)',
};
/**
 * The default: the studio's curves carry up to 15 codebook points and 11 codec points, where one least-squares cubic
 * misses measured points and can bend back between them; the monotone interpolant passes through every measured
 * point and never overshoots it.
 */
export const DEFAULT_BD_METHOD: BdMethod = 'pchip';
export const bdMethodSchema = z.enum(BD_METHODS, { error: `expected ${BD_METHODS.map((m) => `"${m}"`).join(' or ')}` });

/**
 * A delta is averaged only over the interval both curves cover (log rate for BD-PSNR, PSNR for BD-rate). When that
 * shared interval is shorter than this fraction of the shorter curve's own span, the figure speaks for a small part
 * of either curve and is shown with a warning. One half is a judgement (from experience, not a published rule).
 */
export const BD_MIN_OVERLAP_FRACTION = 0.5;

// ---- the patches-per-image rule ----

/**
 * Patch positions along one side of `size` pixels: origins every `stride` pixels while a whole patch fits; the
 * remainder at the far edge is not tiled, and a side no longer than the patch still gives one (padded) patch.
 */
export function positionsAlong(size: number, side: number, stride: number): number {
  return size <= side ? 1 : Math.floor((size - side) / stride) + 1;
}

/** Patches training takes from one image; stride defaults to the patch size (non-overlapping). */
export function patchPositions(width: number, height: number, patch: { width: number; height: number }, stride?: number): number {
  return positionsAlong(width, patch.width, stride ?? patch.width) * positionsAlong(height, patch.height, stride ?? patch.height);
}
