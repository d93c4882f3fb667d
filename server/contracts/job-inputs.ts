import { z } from 'zod';
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
} satisfies Record<JobKind, z.ZodType>;

export type JobInput<K extends JobKind> = z.infer<(typeof jobInputs)[K]>;
