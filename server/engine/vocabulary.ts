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

// ---- codebook structure ----

/**
 * What a run trains (CLI --structure, the run form): full search (with an optional λ list, which makes it
 * entropy-constrained), a binary tree, or residual stages. The codebook's own structure kinds (full,
 * entropy-constrained, tree, residual) are server/engine/structures/types.ts; a run's "full" with λ gives
 * "entropy-constrained" codebooks.
 */
export const RUN_STRUCTURES = ['full', 'tree', 'residual'] as const;
export type RunStructure = (typeof RUN_STRUCTURES)[number];
export const RUN_STRUCTURE_LABELS: Record<RunStructure, string> = {
  full: 'Full search',
  tree: 'Tree-structured',
  residual: 'Residual (multistage)',
};
/** The structures this build trains; any other would parse but be refused until its training is wired in. */
export const TRAINABLE_STRUCTURES: readonly RunStructure[] = ['full', 'tree', 'residual'];
/** How a tree grows (CLI --growth, the run form): balanced to depth b, or greedily, best split per bit first (Riskin & Gray 1991). */
export const TREE_GROWTHS = ['balanced', 'greedy'] as const;
export type TreeGrowthKind = (typeof TREE_GROWTHS)[number];
/** What each growth is called wherever a person reads it (the run form, the run page). */
export const TREE_GROWTH_LABELS: Record<TreeGrowthKind, string> = {
  balanced: 'Balanced to depth b',
  greedy: 'Greedy, pruned to a mean path of b bits',
};
/**
 * How much further than b bits a run's greedy tree grows before it is pruned back. Pruning along the lower hull
 * only pays when it has a larger tree to choose from (Riskin & Gray 1991 grow past the target rate, then prune); one
 * bit doubles the leaves it may reach, as the reference check of tree-structured VQ does.
 */
export const GREEDY_TREE_HEADROOM_BITS = 1;
/**
 * A run's greedy tree at b bits (the studio's training, the run form's summary): grown best split per bit first to at
 * most `leaves` leaves or a mean path of `growRate` bits, then pruned by the generalized BFOS algorithm to the largest
 * subtree on the lower hull whose mean path is at most `pruneRate` = b bits. Its table holds 2·leaves − 1 nodes at
 * most, within the largest codebook (2^BITS.max) for b ≤ BITS.max − 1, the limit a balanced tree has.
 */
export function greedyTreePlan(bits: number): { leaves: number; growRate: number; pruneRate: number } {
  return { leaves: Math.min(2 ** (bits + GREEDY_TREE_HEADROOM_BITS), 2 ** (BITS.max - 1)), growRate: bits + GREEDY_TREE_HEADROOM_BITS, pruneRate: bits };
}
export const runStructureSchema = z.enum(RUN_STRUCTURES, { error: `expected ${RUN_STRUCTURES.map((s) => `"${s}"`).join(', ')}` });

/** How a codebook's table is searched and its indices coded (engine structures/types.ts holds each kind's shape). */
export const STRUCTURE_KINDS = ['full', 'entropy-constrained', 'tree', 'residual'] as const;
export type StructureKind = (typeof STRUCTURE_KINDS)[number];
/** What a codebook's structure is called wherever a person reads it (codebook page, run page, lists). */
export const STRUCTURE_LABELS: Record<StructureKind, string> = {
  full: 'Full search',
  'entropy-constrained': 'Entropy-constrained',
  tree: 'Tree-structured',
  residual: 'Residual (multistage)',
};

/**
 * The rate–distortion curves a run's codebooks form when runs are compared (compare page, BD tables): one per
 * structure, since each buys rate differently. A tree's growth is told apart (balanced to depth b, or greedy), and an
 * entropy-constrained run's codebooks form its λ sweep. Mean removal is a run setting on top of any of these
 * (`curveLabel` names it); the codebook's own kinds are STRUCTURE_KINDS.
 */
export const CURVE_STRUCTURES = ['full', 'entropy-constrained', 'tree-balanced', 'tree-greedy', 'residual'] as const;
export type CurveStructure = (typeof CURVE_STRUCTURES)[number];
export const CURVE_STRUCTURE_LABELS: Record<CurveStructure, string> = {
  full: STRUCTURE_LABELS.full,
  'entropy-constrained': `${STRUCTURE_LABELS['entropy-constrained']} (λ sweep)`,
  'tree-balanced': `${STRUCTURE_LABELS.tree}, balanced`,
  'tree-greedy': `${STRUCTURE_LABELS.tree}, greedy`,
  residual: STRUCTURE_LABELS.residual,
};
/** The curve a codebook belongs to: its kind, and for a tree whether it is balanced (a greedy tree is not). */
export function curveStructureOf(kind: StructureKind, treeBalanced: boolean | null): CurveStructure {
  if (kind === 'tree') return treeBalanced === false ? 'tree-greedy' : 'tree-balanced';
  return kind;
}
/** What a curve is called wherever a person reads it (legend, BD table): its structure, and mean removal when the block mean is coded apart. */
export function curveLabel(structure: CurveStructure, meanBits: number): string {
  return meanBits > 0 ? `${CURVE_STRUCTURE_LABELS[structure]}, mean-removed (${meanBits}-bit mean)` : CURVE_STRUCTURE_LABELS[structure];
}

/**
 * λ, the price of one index bit in squared error per vector (entropy-constrained VQ minimises ‖x − c‖² + λ·ℓ).
 * 0 is plain Lloyd with empty cells dropped; 10^9 is far past the point where one codeword remains for 8-bit pixels
 * in any patch up to 16×16×3 (each vector's squared error is at most 768 · 255² ≈ 5·10^7).
 */
export const LAMBDA = { min: 0, max: 1e9 } as const;
/** λ values one run or one `train --lambda` sweeps at most: one codebook each, like the sizes of a b range (15 of them). */
export const MAX_LAMBDAS = 16;
/** Residual stages S (CLI --stages): at least one; 8 stages of 1..14 bits already reach far past any useful rate. */
export const STAGES = { min: 1, max: 8 } as const;
/** Residual stages when none are named (CLI --stages, the run form): two, sharing the b bits. */
export const RESIDUAL_DEFAULT_STAGES = 2;

/**
 * A λ list as a person writes it (CLI --lambda, the run form): comma-separated values ("50,200,800"), or A..B:N for
 * N values spaced evenly in log λ from A to B (A > 0), which is how rate falls with λ. Duplicates are dropped; the
 * order given is kept (each codebook starts from the same full-search codebook, so order changes nothing but output order).
 */
export function parseLambdaList(text: string): { values: number[] } | { error: string } {
  const num = (t: string) => (/^[+]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i.test(t.trim()) ? Number(t) : Number.NaN);
  const inRange = (v: number) => Number.isFinite(v) && v >= LAMBDA.min && v <= LAMBDA.max;
  const range = /^\s*([^.:,]+(?:\.\d*)?(?:e[+-]?\d+)?)\.\.([^:,]+):(\d+)\s*$/i.exec(text);
  let values: number[];
  if (range) {
    const [a, b, n] = [num(range[1]), num(range[2]), Number(range[3])];
    if (!inRange(a) || !inRange(b) || a <= 0 || b <= a || n < 2 || n > MAX_LAMBDAS) {
      return { error: `a λ range is A..B:N with 0 < A < B ≤ ${LAMBDA.max} and N from 2 to ${MAX_LAMBDAS}, got "${text}"` };
    }
    values = Array.from({ length: n }, (_, i) => (i === n - 1 ? b : Number((a * (b / a) ** (i / (n - 1))).toPrecision(6))));
  } else {
    values = text.split(',').map(num);
    if (values.length === 0 || values.some((v) => !inRange(v))) return { error: `λ takes numbers from ${LAMBDA.min} to ${LAMBDA.max}, comma-separated, or a range A..B:N, got "${text}"` };
  }
  values = [...new Set(values)];
  if (values.length > MAX_LAMBDAS) return { error: `at most ${MAX_LAMBDAS} λ values, got ${values.length}` };
  return { values };
}

/**
 * Bits of each residual stage (CLI --stages with --bits B): S stages share B as evenly as possible, the earlier stages
 * taking the extra bit (the first stages carry most of the signal); or an explicit list "b1,b2,…".
 */
export function parseStages(text: string, totalBits: number | undefined): { bits: number[] } | { error: string } {
  if (/^\d+$/.test(text.trim())) {
    const s = Number(text);
    if (s < STAGES.min || s > STAGES.max) return { error: `--stages must be from ${STAGES.min} to ${STAGES.max}, got "${text}"` };
    if (totalBits === undefined || totalBits < s) return { error: `${s} stages need --bits B with B ≥ ${s} (one bit a stage at least)` };
    return { bits: Array.from({ length: s }, (_, i) => Math.floor(totalBits / s) + (i < totalBits % s ? 1 : 0)) };
  }
  const bits = text.split(',').map((t) => (/^\d+$/.test(t.trim()) ? Number(t) : Number.NaN));
  if (bits.length < STAGES.min || bits.length > STAGES.max || bits.some((b) => !(b >= 1 && b <= BITS.max))) {
    return { error: `--stages takes a count S (${STAGES.min}..${STAGES.max}) or the bits of each stage, 1..${BITS.max}, comma-separated, got "${text}"` };
  }
  return { bits };
}
/** M of the residual M-best search (keep the M best partial sums per stage). */
export const M_BEST = { min: 1, max: 64 } as const;
/** Joint refinement passes of a residual codebook after its stage-by-stage design (CLI --refine, the run form). */
export const REFINEMENT_PASSES = { min: 0, max: 20 } as const;

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
  structure: 'Structure',
  stages: 'Residual stages',
  mBest: 'M-best search M',
  refinementPasses: 'Refinement passes',
  'structure.kind': 'Structure',
  'structure.stages': 'Residual stages',
  'structure.mBest': 'M-best search M',
  'structure.refinementPasses': 'Refinement passes',
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
 * Points a curve needs before a Bjøntegaard figure is drawn from it (points with a positive rate and a finite PSNR):
 * three, the fewest that fix a curve with a bend (a quadratic; VCEG-M33's cubic takes four, used when there are).
 */
export const BD_MIN_POINTS = 3;

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
