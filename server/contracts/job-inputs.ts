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

export const jobInputs = {
  /** Trains every size of a run. */
  train: z.object({ runId: rowId, codebookId: z.null(), payload: z.null() }),
  /** Measures every codebook of a run on its held-out images, or one codebook on the list in its payload. */
  evaluate: z.union([
    z.object({ runId: rowId, codebookId: z.null(), payload: z.null() }),
    z.object({ runId: z.null(), codebookId: rowId, payload: evaluateCodebookPayload }),
  ]),
} satisfies Record<JobKind, z.ZodType>;

export type JobInput<K extends JobKind> = z.infer<(typeof jobInputs)[K]>;
