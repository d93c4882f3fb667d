import { z } from 'zod';
import {
  BITS, COLOR_MODES, EPSILON, initMethodSchema, ITERATIONS, LAMBDA, M_BEST, MAX_LAMBDAS, MEAN_BITS, PATCH_SIDE, REFINEMENT_PASSES, RESIDUAL_DEFAULT_STAGES, runStructureSchema, SEED, STAGES, STRIDE, STRUCTURE_KINDS, TREE_GROWTHS, VECTOR_CAP,
} from '../engine/vocabulary';
import { idParam, pathId } from './common';
import { job, jobState } from './jobs';

const int = (min: number, max: number) => z.number().int().min(min).max(max);
const imageIds = z.array(idParam).min(1).max(10_000);

/** b in bits per block: 2^b codewords. */
export const bitsRange = z
  .object({ from: int(BITS.min, BITS.max), to: int(BITS.min, BITS.max) })
  .strict()
  .refine((b) => b.from <= b.to, { message: 'from must not exceed to', path: ['from'] });

/**
 * POST /api/teams/:teamId/runs (engineer, admin). Give exactly one of trainingImageIds / trainingSetId and of
 * heldOutImageIds / heldOutSetId. With the same set for both, its images are taken by their role; a set named
 * only on one side contributes all of its images to that side. No default is filled in here: the body is
 * stored as submitted, and GET returns it in this same shape.
 */
/** A run's name: the one rule for creating and renaming. */
const runName = z.string().trim().min(1).max(120);

export const createRunBody = z
  .object({
    name: runName,
    notes: z.string().max(10_000).optional(),
    trainingImageIds: imageIds.optional(),
    trainingSetId: idParam.optional(),
    heldOutImageIds: imageIds.optional(),
    heldOutSetId: idParam.optional(),
    patch: z.object({ width: int(PATCH_SIDE.min, PATCH_SIDE.max), height: int(PATCH_SIDE.min, PATCH_SIDE.max) }).strict(),
    /** Step between training patches in pixels; absent: the patch side (non-overlapping). */
    stride: int(STRIDE.min, STRIDE.max).optional(),
    color: z.enum(COLOR_MODES).optional(),
    /** 0: no mean removal; 1..8: the block mean is coded with this many bits and removed before quantizing. */
    meanBits: int(MEAN_BITS.min, MEAN_BITS.max).optional(),
    bits: z.union([int(BITS.min, BITS.max), bitsRange]),
    init: initMethodSchema.optional(),
    epsilon: z.number().gt(EPSILON.min).max(EPSILON.runMax).optional(),
    maxIterations: int(ITERATIONS.runMin, ITERATIONS.max).optional(),
    maxVectors: int(VECTOR_CAP.min, VECTOR_CAP.max).optional(),
    seed: int(SEED.min, SEED.max).optional(),
    /**
     * Entropy-constrained VQ: one codebook per λ (squared error per vector traded for one index bit), each trained from
     * the run's largest full-search codebook (2^bits.to), beside the full-search codebooks.
     */
    lambdas: z.array(z.number().min(LAMBDA.min).max(LAMBDA.max)).min(1).max(MAX_LAMBDAS).optional(),
    /**
     * What the run trains per b (default full): full search, a tree balanced to depth b (b ≤ BITS.max − 1: its table
     * holds every node), or residual stages sharing b bits (`stages` of them, earlier stages taking the extra bit),
     * searched greedily or keeping `mBest` candidates, with `refinementPasses` joint passes.
     */
    structure: runStructureSchema.optional(),
    /**
     * A tree's growth (default balanced): balanced to depth b, or greedy — grown best split per bit first past b and
     * pruned back to a mean path of b bits (the vocabulary's greedyTreePlan).
     */
    growth: z.enum(TREE_GROWTHS).optional(),
    stages: int(STAGES.min, STAGES.max).optional(),
    mBest: int(M_BEST.min, M_BEST.max).optional(),
    refinementPasses: int(REFINEMENT_PASSES.min, REFINEMENT_PASSES.max).optional(),
  })
  .strict()
  .superRefine((b, ctx) => {
    const one = (a: unknown, c: unknown, names: [string, string]) => {
      if ((a === undefined) === (c === undefined)) {
        ctx.addIssue({ code: 'custom', path: [names[0]], message: `give exactly one of ${names[0]} and ${names[1]}` });
      }
    };
    one(b.trainingImageIds, b.trainingSetId, ['trainingImageIds', 'trainingSetId']);
    one(b.heldOutImageIds, b.heldOutSetId, ['heldOutImageIds', 'heldOutSetId']);
    const structure = b.structure ?? 'full';
    const [from, to] = typeof b.bits === 'number' ? [b.bits, b.bits] : [b.bits.from, b.bits.to];
    if (b.lambdas && structure !== 'full') ctx.addIssue({ code: 'custom', path: ['lambdas'], message: `λ values train entropy-constrained full-search codebooks; they do not combine with structure "${structure}"` });
    if (b.growth !== undefined && structure !== 'tree') ctx.addIssue({ code: 'custom', path: ['growth'], message: 'growth needs structure "tree"' });
    for (const name of ['stages', 'mBest', 'refinementPasses'] as const) {
      if (b[name] !== undefined && structure !== 'residual') ctx.addIssue({ code: 'custom', path: [name], message: `${name} needs structure "residual"` });
    }
    if (structure === 'residual' && from < (b.stages ?? RESIDUAL_DEFAULT_STAGES)) {
      ctx.addIssue({ code: 'custom', path: ['bits'], message: `${b.stages ?? RESIDUAL_DEFAULT_STAGES} residual stages need b ≥ ${b.stages ?? RESIDUAL_DEFAULT_STAGES} (one bit a stage at least)` });
    }
    if (structure === 'tree' && to > BITS.max - 1) {
      ctx.addIssue({
        code: 'custom', path: ['bits'],
        message: b.growth === 'greedy'
          ? `a greedy tree of b = ${to} bits grows to ${2 ** (BITS.max - 1)} leaves at most before pruning; its table holds ${2 ** BITS.max}: b at most ${BITS.max - 1}`
          : `a balanced tree of depth ${to} has ${2 ** (to + 1) - 1} nodes; its table holds ${2 ** BITS.max}: b at most ${BITS.max - 1}`,
      });
    }
  });
export type CreateRunBody = z.infer<typeof createRunBody>;

/** The configuration a run's jobs execute: defaults filled in, sets resolved to image ids. */
export const normalizedRunConfig = z.object({
  trainingImageIds: z.array(z.number().int()),
  heldOutImageIds: z.array(z.number().int()),
  patch: z.object({ width: z.number().int(), height: z.number().int() }),
  /** Absent for non-overlapping patches (and in runs made before the stride could be chosen). */
  stride: z.number().int().optional(),
  color: z.enum(COLOR_MODES),
  meanBits: z.number().int(),
  bits: z.object({ from: z.number().int(), to: z.number().int() }),
  /** Codebook sizes the run keeps, 2^from … 2^to. */
  sizes: z.array(z.number().int()),
  init: initMethodSchema,
  epsilon: z.number(),
  maxIterations: z.number().int(),
  maxVectors: z.number().int(),
  seed: z.number().int(),
  /** λ values of the run's entropy-constrained codebooks, distinct, in the order given; absent: full search only. */
  lambdas: z.array(z.number()).optional(),
  /** Absent: full search. A tree per b (balanced to depth b, or greedy and pruned; absent growth: balanced), or residual stages sharing each b. */
  structure: z
    .discriminatedUnion('kind', [
      z.object({ kind: z.literal('tree'), growth: z.enum(TREE_GROWTHS).optional() }),
      z.object({ kind: z.literal('residual'), stages: z.number().int(), mBest: z.number().int().nullable(), refinementPasses: z.number().int() }),
    ])
    .optional(),
});
export type NormalizedRunConfig = z.infer<typeof normalizedRunConfig>;

export const runParams = z.object({ teamId: pathId, runId: pathId });

/** PATCH /api/teams/:teamId/runs/:runId (engineer, admin) → 200 { run }: renames the run. */
export const renameRunBody = z.object({ name: runName }).strict();
export type RenameRunBody = z.infer<typeof renameRunBody>;

/** The point of a run's curve a list shows first: the best PSNR it reached (null until evaluated). */
export const operatingPoint = z.object({
  codebookId: z.number().int(),
  bits: z.number().int(),
  bpp: z.number(),
  psnr: z.number().nullable(),
  mse: z.number(),
});

export const runSummary = z.object({
  id: z.number().int(),
  name: z.string(),
  notes: z.string().nullable(),
  state: jobState,
  error: z.string().nullable(),
  createdBy: z.object({ id: z.number().int(), name: z.string() }).nullable(),
  createdAt: z.string(),
  finishedAt: z.string().nullable(),
  heldOutHash: z.string(),
  /** The fraction of the run's jobs done, 0..1. */
  progress: z.number().min(0).max(1),
  bestOperatingPoint: operatingPoint.nullable(),
});
export type RunSummary = z.infer<typeof runSummary>;

export const runCodebookSummary = z.object({
  id: z.number().int(),
  bits: z.number().int(),
  size: z.number().int(),
  distortion: z.number(),
  iterations: z.number().int(),
  /** The codebook's structure (full search, or entropy-constrained with its λ). */
  structure: z.enum(STRUCTURE_KINDS),
  lambda: z.number().nullable(),
  checksum: z.string(),
});

export const runDetail = runSummary.extend({
  /** The body as it was posted: POST it again (changed or not) to run again. */
  config: createRunBody,
  normalized: normalizedRunConfig,
  jobs: z.array(job),
  codebooks: z.array(runCodebookSummary),
});
export type RunDetail = z.infer<typeof runDetail>;

/** GET /api/teams/:teamId/runs */
export const runsResponse = z.object({ runs: z.array(runSummary) });
/**
 * POST /runs → 201, GET /runs/:runId, PATCH /runs/:runId, POST /runs/:runId/cancel → 200 (409 when the run has
 * already finished). DELETE /runs/:runId (admin) → 204; 409 while one of its jobs is running (cancel it first).
 */
export const runResponse = z.object({ run: runDetail });
