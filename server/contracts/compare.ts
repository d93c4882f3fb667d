import { z } from 'zod';
import { bdMethodSchema, BD_METHODS, COLOR_MODES, DEFAULT_BD_METHOD } from '../engine/vocabulary';
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
});
export type CompareResult = z.infer<typeof compareResponse>;

/** One line of the Bjøntegaard table download: a test curve against a reference curve. */
export const bdTableRow = bdValues.extend({
  /** A run's name, or a codec's (JPEG, WebP, AVIF). */
  reference: z.string(),
  test: z.string(),
  referenceRunId: z.number().int().nullable(),
  testRunId: z.number().int(),
  codec: baselineCodec.nullable(),
});
export const bdTableResponse = z.object({ rate: compareRate, method: z.enum(BD_METHODS), minOverlapFraction: z.number(), rows: z.array(bdTableRow) });
export type BdTable = z.infer<typeof bdTableResponse>;
