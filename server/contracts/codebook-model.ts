import { z } from 'zod';
import { SEED } from '../engine/vocabulary';
import { ANOMALY_RATE, ANOMALY_SCORES, DENOISE_SIGMA, DENOISE_STEP, MODEL_CAUTION } from '../engine/model/limits';
import { idParam, pathId } from './common';
import { job } from './jobs';

// The codebook read as a density of its training patches (server/engine/model/README.md): anomaly scores per block
// and denoising, for the studio. The limits and the caution are the engine's, defined once.
export { ANOMALY_RATE, ANOMALY_SCORES, DENOISE_SIGMA, DENOISE_STEP, MODEL_CAUTION };

/** A decimal number in a query string: the canonical forms only ("0.001", "1e-3", "20"), never "", " 1" or "0x1". */
const queryNumber = (min: number, max: number) =>
  z
    .string()
    .regex(/^[+-]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i, 'Expected a number')
    .transform(Number)
    .pipe(z.number().min(min).max(max));
const queryInt = (min: number, max: number) => z.string().regex(/^\d{1,10}$/, 'Expected a whole number').transform(Number).pipe(z.number().int().min(min).max(max));

/** Most blocks a ranked list answers. */
export const ANOMALY_LIST_MAX = 200;
export const ANOMALY_LIST_DEFAULT = 24;

export const anomalyImageParams = z.object({ teamId: pathId, codebookId: pathId, imageId: pathId });
export const anomalyQuery = z
  .object({
    rate: queryNumber(ANOMALY_RATE.min, ANOMALY_RATE.max).default(ANOMALY_RATE.default),
    score: z.enum(ANOMALY_SCORES).default('nll'),
  })
  .strict();
export const anomalyListQuery = anomalyQuery
  .extend({
    /** The set to rank; default the codebook's run's held-out images. */
    setId: pathId.optional(),
    limit: queryInt(1, ANOMALY_LIST_MAX).default(ANOMALY_LIST_DEFAULT),
  })
  .strict();
export type AnomalyQuery = z.infer<typeof anomalyQuery>;
export type AnomalyListQuery = z.infer<typeof anomalyListQuery>;

const bothScores = z.object({ nll: z.number(), distance: z.number() });

/** What every anomaly answer says of its model and thresholds. */
const anomalyModelInfo = z.object({
  codebookId: z.number().int(),
  rate: z.number(),
  score: z.enum(ANOMALY_SCORES),
  /** False for an imported codebook: no training images in the studio, so scores only, no threshold and nothing flagged. */
  calibrated: z.boolean(),
  varianceSource: z.enum(['training-vectors', 'cell-distortion', 'stored-distortion']),
  trainingBlocks: z.number().int(),
  thresholds: bothScores.nullable(),
  flaggedTrainingBlocks: bothScores.nullable(),
  caution: z.string(),
});

/** An anomaly map job's result: every coding block's scores, in raster order of blocks. */
export const anomalyMapResponse = anomalyModelInfo.extend({
  imageId: z.number().int(),
  width: z.number().int(),
  height: z.number().int(),
  blockWidth: z.number().int(),
  blockHeight: z.number().int(),
  blocksX: z.number().int(),
  blocksY: z.number().int(),
  /** Negative log-likelihood under the mixture, nats per block; blocksX·blocksY values. */
  nll: z.array(z.number()),
  /** Squared distance to the nearest codeword, summed over the block; blocksX·blocksY values. */
  distance: z.array(z.number()),
  /** Indices (raster order) of the blocks above the threshold. */
  flagged: z.array(z.number().int()),
});
export type AnomalyMap = z.infer<typeof anomalyMapResponse>;

/** An anomaly list job's result: the most unusual blocks over a set, highest score first. */
export const anomalyListResponse = anomalyModelInfo.extend({
  images: z.number().int(),
  blocks: z.array(
    z.object({
      imageId: z.number().int(),
      fileName: z.string(),
      /** Pixel coordinates of the block's top-left corner, and its size. */
      x: z.number().int(),
      y: z.number().int(),
      width: z.number().int(),
      height: z.number().int(),
      nll: z.number(),
      distance: z.number(),
      flagged: z.boolean(),
    }),
  ),
});
export type AnomalyList = z.infer<typeof anomalyListResponse>;

export const denoiseQuery = z
  .object({
    sigma: queryNumber(DENOISE_SIGMA.min, DENOISE_SIGMA.max),
    seed: queryInt(SEED.min, SEED.max).default(1),
    step: queryInt(DENOISE_STEP.min, DENOISE_STEP.max).default(DENOISE_STEP.default),
  })
  .strict();
export type DenoiseQuery = z.infer<typeof denoiseQuery>;

const psnr = z.number().nullable();
/** A denoise job's result: seeded noise added, removed by both estimators. */
export const denoiseResponse = z.object({
  codebookId: z.number().int(),
  imageId: z.number().int(),
  width: z.number().int(),
  height: z.number().int(),
  sigma: z.number(),
  seed: z.number().int(),
  step: z.number().int(),
  varianceSource: z.enum(['training-vectors', 'cell-distortion', 'stored-distortion']),
  /** Against the image as the codebook sees it; null when exact. */
  psnr: z.object({ noisy: psnr, hard: psnr, mean: psnr }),
  /** Where the PNGs are (GET …/model-jobs/:jobId/views/:view): the clean image, with the noise, and denoised by the nearest codeword and by the posterior mean. */
  views: z.object({ clean: z.string(), noisy: z.string(), hard: z.string(), mean: z.string() }),
  caution: z.string(),
});
export type DenoiseResult = z.infer<typeof denoiseResponse>;

// ---- the jobs that compute them (on the workers, tracked like evaluation) ----

/** The views of a denoise job's result, each a PNG. */
export const DENOISE_VIEWS = ['clean', 'noisy', 'hard', 'mean'] as const;

/**
 * POST /api/teams/:teamId/codebooks/:codebookId/anomaly-jobs: with `imageId`, a map of that image's blocks; else a
 * ranked list over `setId` (default the codebook's run's held-out images) keeping `limit` blocks.
 */
export const anomalyJobBody = z
  .object({
    imageId: idParam.optional(),
    setId: idParam.optional(),
    rate: z.number().min(ANOMALY_RATE.min).max(ANOMALY_RATE.max).default(ANOMALY_RATE.default),
    score: z.enum(ANOMALY_SCORES).default('nll'),
    limit: z.number().int().min(1).max(ANOMALY_LIST_MAX).optional(),
  })
  .strict()
  .refine((b) => b.imageId === undefined || (b.setId === undefined && b.limit === undefined), {
    message: 'a map names one image; setId and limit belong to a ranked list',
    path: ['imageId'],
  });
export type AnomalyJobBody = z.infer<typeof anomalyJobBody>;

/** POST /api/teams/:teamId/codebooks/:codebookId/denoise-jobs */
export const denoiseJobBody = z
  .object({
    imageId: idParam,
    sigma: z.number().min(DENOISE_SIGMA.min).max(DENOISE_SIGMA.max),
    seed: z.number().int().min(SEED.min).max(SEED.max).default(1),
    step: z.number().int().min(DENOISE_STEP.min).max(DENOISE_STEP.max).default(DENOISE_STEP.default),
  })
  .strict();
export type DenoiseJobBody = z.infer<typeof denoiseJobBody>;

export const modelJobParams = z.object({ teamId: pathId, jobId: pathId });
export const modelJobViewParams = modelJobParams.extend({ view: z.enum(DENOISE_VIEWS) });

/** What an anomaly or denoise job computes, by the kind of result. */
export const modelResult = z.discriminatedUnion('type', [
  anomalyMapResponse.extend({ type: z.literal('anomaly-map') }),
  anomalyListResponse.extend({ type: z.literal('anomaly-list') }),
  denoiseResponse.extend({ type: z.literal('denoise') }),
]);
export type ModelResult = z.infer<typeof modelResult>;

/**
 * A model job (202 from the POSTs; GET /api/teams/:teamId/model-jobs/:jobId): its state and progress, and its result
 * once it has succeeded (null before).
 */
export const modelJobResponse = z.object({
  job: job.extend({ kind: z.enum(['anomaly', 'denoise']), codebookId: z.number().int() }),
  result: modelResult.nullable(),
  caution: z.string(),
});
export type ModelJobView = z.infer<typeof modelJobResponse>;

/**
 * POST …/anomaly-jobs/find and …/denoise-jobs/find: the newest job the same request queued that has not failed or
 * been cancelled, or null. Queues nothing, so a page can show a stored result without starting a job.
 */
export const modelJobLookupResponse = z.object({ job: modelJobResponse.nullable() });
export type ModelJobLookup = z.infer<typeof modelJobLookupResponse>;
