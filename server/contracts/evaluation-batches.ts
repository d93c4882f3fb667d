import { z } from 'zod';
import { idParam, pathId, teamParams } from './common';
import { rateDistortion } from './evaluation';
import { job } from './jobs';

/**
 * Batch evaluation: several codebooks measured on several image sets as one evaluate job (progress, status,
 * cancellation), and the codebooks × sets matrix of its results. Units as in evaluation.ts.
 */

/** At most this many codebooks and sets in one batch: a matrix a page can show and a job can finish in a working day. */
export const EVALUATION_BATCH_LIMITS = { codebooks: 50, sets: 20 } as const;

const distinctIds = (what: string, max: number) =>
  z
    .array(idParam)
    .min(1, `give at least one ${what}`)
    .max(max, `at most ${max} ${what}s in one batch`)
    .refine((ids) => new Set(ids).size === ids.length, `each ${what} once`);

/** POST /api/teams/:teamId/evaluation-batches → 202 {batch}: every image of each set is held out for the codebooks. */
export const createEvaluationBatchBody = z
  .object({
    codebookIds: distinctIds('codebook', EVALUATION_BATCH_LIMITS.codebooks),
    imageSetIds: distinctIds('image set', EVALUATION_BATCH_LIMITS.sets),
  })
  .strict();
export type CreateEvaluationBatchBody = z.infer<typeof createEvaluationBatchBody>;

export const evaluationBatchParams = z.object({ teamId: pathId, jobId: pathId });
export const evaluationBatchListParams = teamParams;

export const evaluationBatchCodebook = z.object({
  id: z.number().int(),
  /** null when the codebook has been deleted since the batch was queued. */
  name: z.string().nullable(),
  size: z.number().int().nullable(),
  bits: z.number().int().nullable(),
});
export const evaluationBatchSet = z.object({
  /** null for a list of images given by id (a single codebook's evaluation on chosen images). */
  setId: z.number().int().nullable(),
  name: z.string(),
  imageCount: z.number().int(),
  heldOutHash: z.string(),
});
/** One cell of the matrix: the codebook's pooled figures on the set, null until measured. */
export const evaluationBatchCell = z.object({
  codebookId: z.number().int(),
  setIndex: z.number().int(),
  result: rateDistortion.nullable(),
});

/** A batch: its job (state, progress, error), what it measures, and the cells measured so far. */
export const evaluationBatch = z.object({
  job,
  codebooks: z.array(evaluationBatchCodebook),
  sets: z.array(evaluationBatchSet),
  cells: z.array(evaluationBatchCell),
});
export type EvaluationBatch = z.infer<typeof evaluationBatch>;
export const evaluationBatchResponse = z.object({ batch: evaluationBatch });
export const evaluationBatchesResponse = z.object({
  batches: z.array(z.object({ job, codebookCount: z.number().int(), setCount: z.number().int(), setNames: z.array(z.string()) })),
});
export type EvaluationBatchList = z.infer<typeof evaluationBatchesResponse>;
