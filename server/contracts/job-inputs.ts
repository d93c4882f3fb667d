import { z } from 'zod';
import { ANOMALY_RATE, ANOMALY_SCORES, DENOISE_SIGMA, DENOISE_STEP } from '../engine/model/limits';
import { SEED } from '../engine/vocabulary';
import type { JobKind } from './jobs';

/**
 * What each kind of job acts on, as its row holds it (run, codebook, payload). The runner checks a claimed job
 * against its kind's schema before the handler starts: a row written by an older version or by hand fails the job
 * with the reason, instead of reaching the handler half-formed.
 */
const rowId = z.number().int().positive();
const sha256Hex = z.string().regex(/^[0-9a-f]{64}$/, 'a SHA-256 digest in lower-case hex');

/** The payload of an evaluate job that measures one codebook on a held-out list of the team's images. */
export const evaluateCodebookPayload = z.object({ heldOutImageIds: z.array(rowId).min(1), heldOutHash: sha256Hex }).strict();
export type EvaluateCodebookPayload = z.infer<typeof evaluateCodebookPayload>;

/**
 * The payload of an anomaly job: the images to score, in order (a map: one image, every block kept; a list: a set,
 * the `limit` most unusual blocks kept), at a false-alarm rate by one score.
 */
export const anomalyJobPayload = z
  .object({
    target: z.enum(['map', 'list']),
    imageIds: z.array(rowId).min(1),
    rate: z.number().min(ANOMALY_RATE.min).max(ANOMALY_RATE.max),
    score: z.enum(ANOMALY_SCORES),
    limit: z.number().int().min(0),
  })
  .strict();
export type AnomalyJobPayload = z.infer<typeof anomalyJobPayload>;

/** The payload of a denoise job: one image, seeded synthetic noise of σ, and the step between patch origins. */
export const denoiseJobPayload = z
  .object({
    imageId: rowId,
    sigma: z.number().min(DENOISE_SIGMA.min).max(DENOISE_SIGMA.max),
    seed: z.number().int().min(SEED.min).max(SEED.max),
    step: z.number().int().min(DENOISE_STEP.min).max(DENOISE_STEP.max),
  })
  .strict();
export type DenoiseJobPayload = z.infer<typeof denoiseJobPayload>;

/**
 * The payload of an evaluate job that measures several codebooks on several image lists (a batch; one codebook on
 * one list is the smallest batch). Each list's images and key are fixed when it is queued, as a run's are.
 */
export const evaluateBatchPayload = z
  .object({
    codebookIds: z.array(rowId).min(1),
    sets: z.array(z.object({ setId: rowId.nullable(), name: z.string(), imageIds: z.array(rowId).min(1), heldOutHash: sha256Hex }).strict()).min(1),
  })
  .strict();
export type EvaluateBatchPayload = z.infer<typeof evaluateBatchPayload>;

export const jobInputs = {
  /** Trains every size of a run. */
  train: z.object({ runId: rowId, codebookId: z.null(), payload: z.null() }),
  /**
   * Measures every codebook of a run on its held-out images, one codebook on the list in its payload (as queued
   * before batches), or a batch of codebooks on several lists (codebookId names the codebook of a one-codebook batch).
   */
  evaluate: z.union([
    z.object({ runId: rowId, codebookId: z.null(), payload: z.null() }),
    z.object({ runId: z.null(), codebookId: rowId, payload: evaluateCodebookPayload }),
    z.object({ runId: z.null(), codebookId: rowId.nullable(), payload: evaluateBatchPayload }),
  ]),
  /** Scores one image's blocks or ranks a set's under one codebook, with thresholds from its run's training images. */
  anomaly: z.object({ runId: z.null(), codebookId: rowId, payload: anomalyJobPayload }),
  /** Adds seeded noise to one image and removes it with both estimators of one codebook. */
  denoise: z.object({ runId: z.null(), codebookId: rowId, payload: denoiseJobPayload }),
} satisfies Record<JobKind, z.ZodType>;

export type JobInput<K extends JobKind> = z.infer<(typeof jobInputs)[K]>;
