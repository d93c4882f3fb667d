import { z } from 'zod';
import { COLOR_MODES, STRUCTURE_KINDS } from '../engine/vocabulary';
import { pathId } from './common';

export const codebookParams = z.object({ teamId: pathId, codebookId: pathId });

export const codebookSummary = z.object({
  id: z.number().int(),
  name: z.string(),
  source: z.enum(['trained', 'imported']),
  runId: z.number().int().nullable(),
  /** The run's name, or 'imported'. */
  origin: z.string(),
  bits: z.number().int(),
  size: z.number().int(),
  dimension: z.number().int(),
  patch: z.object({ width: z.number().int(), height: z.number().int() }),
  color: z.enum(COLOR_MODES),
  channels: z.number().int(),
  meanBits: z.number().int(),
  /** How the table is searched and its indices coded (the codebook JSON's structure.kind). */
  structure: z.enum(STRUCTURE_KINDS),
  /** λ of an entropy-constrained codebook (squared error per vector traded for one index bit), else null. */
  lambda: z.number().nullable(),
  checksum: z.string(),
  /** MSE per component on the training vectors. */
  distortion: z.number(),
  createdAt: z.string(),
});
export type CodebookSummary = z.infer<typeof codebookSummary>;

export const traceEntry = z.object({
  size: z.number().int(),
  iteration: z.number().int(),
  distortion: z.number(),
  emptyRepaired: z.number().int(),
  elapsedMs: z.number(),
  redecided: z.number().int().optional(),
});

export const codebookDetail = codebookSummary.extend({
  /** Training vectors per cell (the usage histogram). */
  usage: z.array(z.number().int()),
  /** Total squared error per cell on the training vectors (null for imported codebooks, which do not carry it). */
  cellDistortion: z.array(z.number()).nullable(),
  trace: z.array(traceEntry),
  /** size × dimension; components ((row·width)+column)·channels+channel. */
  codewords: z.array(z.array(z.number())),
  training: z.record(z.string(), z.unknown()),
  /** Index bits per block at fixed rate: ceil(log2 K), a tree's longest path, or Σ b_s of residual stages. */
  indexBits: z.number().int(),
  /** Residual stages' bits, stage 0 first; null for other structures. */
  stages: z.array(z.number().int()).nullable(),
});
export type CodebookDetail = z.infer<typeof codebookDetail>;

/** GET /api/teams/:teamId/codebooks */
export const codebooksResponse = z.object({ codebooks: z.array(codebookSummary) });
/** GET /codebooks/:codebookId; POST /codebooks/import → 201 (source 'imported') */
export const codebookResponse = z.object({ codebook: codebookDetail });
/**
 * GET /codebooks/:codebookId/export → the engine's codebook document (format "cellwright-codebook"), as an attachment.
 * POST /codebooks/import takes that document as the JSON body; an optional `?name=` names the imported codebook.
 */
/**
 * GET …/codebooks/:codebookId/export?target=json|npy: the codebook document (format/FORMAT.md), or its codewords
 * alone as a NumPy .npy file (NEP 1, version 1.0: float32 '<f4', K × dimension, C order).
 */
export const exportCodebookQuery = z.object({ target: z.enum(['json', 'npy']).default('json') }).strict();
export type ExportTarget = z.infer<typeof exportCodebookQuery>['target'];

export const importCodebookQuery = z.object({ name: z.string().trim().min(1).max(200).optional() }).strict();
