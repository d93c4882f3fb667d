import { z } from 'zod';
import { bdMethodSchema, BD_METHODS, COLOR_MODES, CURVE_STRUCTURES, DEFAULT_BD_METHOD } from '../engine/vocabulary';
import { bdValues } from './bd';
import { baselineCodec, baselineCurves } from './evaluation';

export const compareRate = z.enum(['fixed', 'entropy', 'actual']);
export type CompareRate = z.infer<typeof compareRate>;

export const COMPARE_MIN_RUNS = 2;
export const COMPARE_MAX_RUNS = 6;

const runId = z.number({ error: 'expected run ids separated by commas' }).int().positive().max(2 ** 31 - 1);

const compareFields = {
    runs: z
      .string()
      .transform((s) => s.split(',').map((x) => (/^\s*\d+\s*$/.test(x) ? Number(x) : NaN)))
      .pipe(z.array(runId).min(COMPARE_MIN_RUNS, `compare needs at least ${COMPARE_MIN_RUNS} runs`).max(COMPARE_MAX_RUNS, `compare takes at most ${COMPARE_MAX_RUNS} runs`))
      .refine((ids) => new Set(ids).size === ids.length, 'name each run once'),
    rate: compareRate.default('actual'),
    /** How each curve is drawn for the Bjøntegaard deltas (BD_METHODS in the run vocabulary). */
    method: bdMethodSchema.default(DEFAULT_BD_METHOD),
};

/** GET /api/teams/:teamId/compare?runs=a,b,…&rate=fixed|entropy|actual&method=pchip|cubic (2–6 distinct runs of the team) */
export const compareQuery = z.object(compareFields).strict();
export type CompareQuery = z.infer<typeof compareQuery>;

/** GET /api/teams/:teamId/compare/bd-table?…&format=json|csv: the Bjøntegaard table of the same comparison as a file. */
export const bdTableQuery = z.object({ ...compareFields, format: z.enum(['json', 'csv']).default('json') }).strict();

/** A point on the chosen rate definition, in bits per pixel. */
export const comparePoint = z.object({
  codebookId: z.number().int(),
  bits: z.number().int(),
  size: z.number().int(),
  bpp: z.number(),
  mse: z.number(),
  psnr: z.number().nullable(),
  ssim: z.number().nullable(),
});

/** Flattened configuration: `patch.width`, `bits.from`, image counts instead of id lists. */
export const flatConfig = z.record(z.string(), z.union([z.string(), z.number(), z.boolean(), z.null()]));

/** A point of a structure's curve: a comparison point, with λ for an entropy-constrained codebook (null otherwise). */
export const compareSeriesPoint = comparePoint.extend({ lambda: z.number().nullable() });

/**
 * One structure's curve of a run (CURVE_STRUCTURES in the run vocabulary): the run's evaluated codebooks of that
 * structure on the chosen rate. Each series has its own BD figures against the codecs and against every other series.
 */
export const compareSeries = z.object({
  /** `<runId>:<structure>`, unique within the answer; the BD rows name series by it. */
  id: z.string(),
  runId: z.number().int(),
  structure: z.enum(CURVE_STRUCTURES),
  /** Bits of the coded block mean (0: no mean removal). */
  meanBits: z.number().int(),
  /** The structure as people read it (curveLabel in the run vocabulary), without the run's name. */
  label: z.string(),
  /** By rate: b for a fixed-rate structure, λ (largest first) for a λ sweep. */
  points: z.array(compareSeriesPoint),
  /** Points a BD figure can use (positive rate, finite PSNR); below `bdMinPoints` the series has no BD figures. */
  usablePoints: z.number().int(),
  enoughPoints: z.boolean(),
});
export type CompareSeries = z.infer<typeof compareSeries>;

export const compareRun = z.object({
  id: z.number().int(),
  name: z.string(),
  state: z.string(),
  heldOutHash: z.string(),
  color: z.enum(COLOR_MODES),
  config: flatConfig,
  points: z.array(comparePoint),
  /** The standard codecs measured on this run's held-out images, on the actual rate (a codec file's bytes). */
  baselines: baselineCurves,
  /** One curve per structure among the run's evaluated codebooks, in CURVE_STRUCTURES order (`points` is its full-search codebooks alone). */
  series: z.array(compareSeries),
});

export const comparePair = bdValues.extend({
  reference: z.number().int(),
  test: z.number().int(),
  sameHeldOut: z.boolean(),
});

export const compareResponse = z.object({
  rate: compareRate,
  runs: z.array(compareRun),
  /** Config keys present in any run, and those whose values are not all equal. */
  configKeys: z.array(z.string()),
  differingKeys: z.array(z.string()),
  /** Common axes for every run's curve and JPEG points: [min, max], null when there is nothing finite to plot. */
  axes: z.object({ bpp: z.tuple([z.number(), z.number()]).nullable(), psnr: z.tuple([z.number(), z.number()]).nullable() }),
  /** True when not all runs were measured on the same held-out images; BD values of those pairs are then null. */
  heldOutMismatch: z.boolean(),
  pairs: z.array(comparePair),
  /** How every BD figure of this answer was computed. */
  method: z.enum(BD_METHODS),
  /** Each run (test) against each standard codec (reference) on the run's own held-out list: JPEG, WebP, AVIF. */
  againstBaselines: z.array(bdValues.extend({ runId: z.number().int(), codec: baselineCodec })),
  /**
   * Every ordered pair of series (runs' structures, a run's own structures included) measured on the same held-out
   * images: `reference` and `test` are series ids. Pairs on different held-out images, or with a series short of
   * `bdMinPoints`, carry null figures and the reason.
   */
  seriesPairs: z.array(bdValues.extend({ reference: z.string(), test: z.string(), sameHeldOut: z.boolean() })),
  /** Each series (test) against JPEG, WebP and AVIF (reference) on its run's held-out list. */
  seriesAgainstBaselines: z.array(bdValues.extend({ seriesId: z.string(), runId: z.number().int(), codec: baselineCodec })),
  /** Usable points a series needs for a BD figure (BD_MIN_POINTS in the run vocabulary). */
  bdMinPoints: z.number().int(),
});
export type CompareResult = z.infer<typeof compareResponse>;

/** One line of the Bjøntegaard table download: a test curve against a reference curve. */
export const bdTableRow = bdValues.extend({
  /** A curve's name, its run's and its structure's ("4×4 · Tree-structured, balanced"), or a codec's (JPEG, WebP, AVIF). */
  reference: z.string(),
  test: z.string(),
  referenceRunId: z.number().int().nullable(),
  testRunId: z.number().int(),
  codec: baselineCodec.nullable(),
  /** The series (`<runId>:<structure>`) of each side; null for a codec. `reference` and `test` name the run and the structure. */
  referenceSeries: z.string().nullable(),
  testSeries: z.string(),
});
export const bdTableResponse = z.object({ rate: compareRate, method: z.enum(BD_METHODS), minOverlapFraction: z.number(), rows: z.array(bdTableRow) });
export type BdTable = z.infer<typeof bdTableResponse>;
