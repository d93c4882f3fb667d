import { z } from 'zod';
import { COLOR_MODES } from '../engine/vocabulary';
import { baselinePoint } from './evaluation';

export const compareRate = z.enum(['fixed', 'entropy', 'actual']);
export type CompareRate = z.infer<typeof compareRate>;

export const COMPARE_MIN_RUNS = 2;
export const COMPARE_MAX_RUNS = 6;

const runId = z.number({ error: 'expected run ids separated by commas' }).int().positive().max(2 ** 31 - 1);

/** GET /api/teams/:teamId/compare?runs=a,b,…&rate=fixed|entropy|actual (2–6 distinct runs of the team) */
export const compareQuery = z
  .object({
    runs: z
      .string()
      .transform((s) => s.split(',').map((x) => (/^\s*\d+\s*$/.test(x) ? Number(x) : NaN)))
      .pipe(z.array(runId).min(COMPARE_MIN_RUNS, `compare needs at least ${COMPARE_MIN_RUNS} runs`).max(COMPARE_MAX_RUNS, `compare takes at most ${COMPARE_MAX_RUNS} runs`))
      .refine((ids) => new Set(ids).size === ids.length, 'name each run once'),
    rate: compareRate.default('actual'),
  })
  .strict();
export type CompareQuery = z.infer<typeof compareQuery>;

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
  jpeg: z.array(baselinePoint),
});

export const bdValues = z.object({
  /** Percent rate change of the test curve at equal PSNR; negative = fewer bits. */
  bdRate: z.number().nullable(),
  /** Mean PSNR change of the test curve at equal rate, dB. */
  bdPsnr: z.number().nullable(),
  /** Why a value is null (different held-out images, too few points, no overlap). */
  reason: z.string().nullable(),
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
  /** Each run (test) against JPEG on its own held-out list (reference). */
  againstJpeg: z.array(bdValues.extend({ runId: z.number().int() })),
});
export type CompareResult = z.infer<typeof compareResponse>;
