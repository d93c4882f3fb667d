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

const int = () => z.number().int();
/** Worst-case operations of one block (or per pixel: divided by the block's pixels), server/engine/structures/cost.ts. */
const operationCounts = z.object({
  /** Encoder multiply-adds: one per component of each squared distance evaluated. */
  encodeMultiplyAdds: z.number(),
  /** Encoder comparisons picking the nearest candidate(s). */
  encodeComparisons: z.number(),
  /** Decoder additions (summing residual stages). */
  decodeAdds: z.number(),
  /** Decoder comparisons turning the index bits into a table row (Huffman: one a bit; tree: one leaf test a node). */
  decodeComparisons: z.number(),
});

/** What the codebook costs a device (server/engine/firmware/decoder-cost.ts): tables, operations, longest code. */
export const decoderCost = z.object({
  structure: z.enum(STRUCTURE_KINDS),
  dimension: int(),
  pixelsPerBlock: int(),
  /** Codewords the encoder searches (every node of a tree) and those a decoder reads blocks from (a tree's leaves). */
  encoderCodewords: int(),
  decoderCodewords: int(),
  /** float32 tables of the encoder and of the decoder, bytes. */
  encoderFloatBytes: int(),
  decoderFloatBytes: int(),
  /** The firmware table at each storage it can take (uint8 for plain codebooks; int16 and int8 for signed ones). */
  firmware: z.array(
    z.object({
      type: z.enum(['uint8', 'int8', 'int16']),
      fractionBits: int(),
      saturated: int(),
      /** Bytes of the C codeword table. */
      codewordBytes: int(),
      /** Bytes of the structure's own C tables: Huffman code, tree children or stage offsets. */
      structureBytes: int(),
    }),
  ),
  perBlock: operationCounts,
  perPixel: operationCounts,
  /** Longest index of a block in bits, the mean code's bits, and their sum (the worst-case code length of a block). */
  maxIndexBits: int(),
  meanBits: int(),
  maxBitsPerBlock: int(),
  fixedRate: z.boolean(),
});
export type DecoderCostFigures = z.infer<typeof decoderCost>;

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
  /**
   * Rows whose cells split the training vectors once (a tree's leaves, a residual codebook's first stage), over which
   * the page sums usage; null when every row is such a cell.
   */
  partitionRows: z.array(z.number().int()).nullable(),
  /** Table bytes, operations per block and per pixel, worst-case code length. */
  decoderCost,
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
