import { z } from 'zod';
import { BD_METHODS, COLOR_MODES, STRUCTURE_KINDS } from '../engine/vocabulary';
import { bdValues } from './bd';
import { idParam, pathId } from './common';

/**
 * Rate–distortion results. Units: bpp in bits per pixel; MSE per pixel component on the 0..255 scale; PSNR in dB,
 * null when the reconstruction is exact (then `lossless` is true); SSIM unitless, null for images smaller than its
 * 11×11 window. Rates: fixed = (index bits + mean bits) per block over the block's pixels; entropy = the empirical
 * entropy of the coded symbols over the held-out set; actual = container bytes × 8 over pixels; raw = the bytes of the
 * container with the raw payload (header, packed indices and mean codes, no markers: what a table-lookup decoder reads)
 * × 8 over pixels.
 * Pooled figures: MSE over all pixel components, PSNR from that MSE, SSIM weighted by pixels, rates total bits over
 * total pixels.
 */
export const rateDistortion = z.object({
  bppFixed: z.number(),
  bppEntropy: z.number(),
  bppActual: z.number(),
  bppRaw: z.number(),
  mse: z.number(),
  psnr: z.number().nullable(),
  ssim: z.number().nullable(),
  lossless: z.boolean(),
});

export const curvePoint = rateDistortion.extend({
  codebookId: z.number().int(),
  bits: z.number().int(),
  size: z.number().int(),
  /** The codebook's structure: each structure (and an entropy-constrained run's λ sweep) is a series of its own. */
  structure: z.enum(STRUCTURE_KINDS),
  lambda: z.number().nullable(),
});
export type CurvePoint = z.infer<typeof curvePoint>;

export const baselineCodec = z.enum(['jpeg', 'webp', 'avif']);
export type BaselineCodecName = z.infer<typeof baselineCodec>;

export const baselinePoint = z.object({
  quality: z.number().int(),
  bpp: z.number(),
  mse: z.number(),
  psnr: z.number().nullable(),
  ssim: z.number().nullable(),
});
export type BaselinePointOut = z.infer<typeof baselinePoint>;

/** Codec → points by increasing quality; a codec this server cannot encode is an empty list. */
export const baselineCurves = z.object({ jpeg: z.array(baselinePoint), webp: z.array(baselinePoint), avif: z.array(baselinePoint) });
export type BaselineCurves = z.infer<typeof baselineCurves>;

export const runRef = z.object({ id: z.number().int(), name: z.string(), state: z.string() });

/** GET /api/teams/:teamId/runs/:runId/curve (JSON, or ?format=csv) */
export const runCurveResponse = z.object({
  run: runRef,
  heldOutHash: z.string(),
  color: z.enum(COLOR_MODES).nullable(),
  points: z.array(curvePoint),
  baselines: baselineCurves,
  /**
   * The run's codebooks (on the actual rate, bytes of their coded files, as the codecs' rate is) against each codec:
   * Bjøntegaard deltas by the default method, over the interval the two curves share.
   */
  bd: z.object({ method: z.enum(BD_METHODS), againstBaselines: z.array(bdValues.extend({ codec: baselineCodec })) }),
});
export type RunCurve = z.infer<typeof runCurveResponse>;

export const imageMetrics = rateDistortion.extend({
  imageId: z.number().int(),
  fileName: z.string(),
  width: z.number().int(),
  height: z.number().int(),
  containerBytes: z.number().int(),
  /** bytes of the same image's container with the raw payload (see bppRaw) */
  rawBytes: z.number().int(),
});
export type ImageMetrics = z.infer<typeof imageMetrics>;

/** GET /api/teams/:teamId/runs/:runId/metrics (JSON, or ?format=csv): every codebook on every held-out image */
export const runMetricsResponse = z.object({
  run: runRef,
  heldOutHash: z.string(),
  codebooks: z.array(z.object({ codebookId: z.number().int(), bits: z.number().int(), size: z.number().int(), images: z.array(imageMetrics) })),
});
export type RunMetrics = z.infer<typeof runMetricsResponse>;

export const runResultParams = z.object({ teamId: pathId, runId: pathId });
export const exportFormatQuery = z.object({ format: z.enum(['json', 'csv']).default('json') }).strict();

export const evaluateCodebookParams = z.object({ teamId: pathId, codebookId: pathId });
/** POST /api/teams/:teamId/codebooks/:codebookId/evaluate (imported codebooks) → 202 {job} */
export const evaluateCodebookBody = z
  .object({
    heldOutImageIds: z.array(idParam).min(1).max(2000).optional(),
    heldOutSetId: idParam.optional(),
  })
  .strict()
  .refine((b) => (b.heldOutImageIds === undefined) !== (b.heldOutSetId === undefined), {
    message: 'give exactly one of heldOutImageIds and heldOutSetId',
    path: ['heldOutImageIds'],
  });
export type EvaluateCodebookBody = z.infer<typeof evaluateCodebookBody>;

export const evaluationJob = z.object({
  id: z.number().int(),
  kind: z.literal('evaluate'),
  state: z.string(),
  codebookId: z.number().int(),
  heldOutHash: z.string(),
  imageCount: z.number().int(),
});
export const evaluateCodebookResponse = z.object({ job: evaluationJob });

/** GET /api/teams/:teamId/codebooks/:codebookId/evaluations: the codebook's evaluations with their per-image rows */
export const codebookEvaluationsResponse = z.object({
  evaluations: z.array(
    rateDistortion.extend({
      id: z.number().int(),
      heldOutHash: z.string(),
      pixels: z.number().int(),
      createdAt: z.string(),
      images: z.array(imageMetrics),
    }),
  ),
});
export type CodebookEvaluations = z.infer<typeof codebookEvaluationsResponse>;

export const reconstructionParams = z.object({ teamId: pathId, codebookId: pathId, imageId: pathId });
/** `info` answers JSON figures; the other views a PNG with X-Encoded-Bytes. */
export const reconstructionQuery = z.object({ view: z.enum(['original', 'reconstruction', 'error', 'info']).default('reconstruction') }).strict();
export type ReconstructionViewName = z.infer<typeof reconstructionQuery>['view'];

/**
 * GET …/codebooks/:codebookId/index-map/:imageId?plane=indices|means: the image's coding as a NumPy .npy file (NEP 1,
 * version 1.0), blocksY × blocksX in the raster order of blocks: codeword indices (uint16 up to 65,536 codewords, else
 * uint32), or a mean-removed codebook's quantised block mean codes (uint8).
 */
export const indexMapQuery = z.object({ plane: z.enum(['indices', 'means']).default('indices') }).strict();

/** GET …/codebooks/:codebookId/reconstruction/:imageId?view=info */
export const reconstructionInfo = z.object({
  codebookId: z.number().int(),
  imageId: z.number().int(),
  width: z.number().int(),
  height: z.number().int(),
  encodedBytes: z.number().int(),
  bpp: z.number(),
  mse: z.number(),
  psnr: z.number().nullable(),
  ssim: z.number().nullable(),
  lossless: z.boolean(),
});
export type ReconstructionInfo = z.infer<typeof reconstructionInfo>;
