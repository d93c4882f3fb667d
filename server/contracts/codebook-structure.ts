import { z } from 'zod';

/**
 * GET /api/teams/:teamId/codebooks/:codebookId/structure: how the codebook's table reads level by level (a tree) or
 * stage by stage (residual). The codewords themselves are the detail's (`codewords`, table order); this names which
 * rows belong where. Full-search and entropy-constrained codebooks are one flat table and answer only their kind.
 */
export const treeNodeView = z.object({
  /** Row of the table (node number, breadth-first). */
  node: z.number().int(),
  /** null for the root. */
  parent: z.number().int().nullable(),
  leaf: z.boolean(),
  /** Training vectors whose descent passes through the node (its cell population at this level). */
  usage: z.number().int(),
});
export const treeLevelView = z.object({
  /** 0 = the root. */
  level: z.number().int(),
  nodes: z.array(treeNodeView),
  /** Σ usage of the level's nodes: the training vectors whose descent reaches this level (not those ended at a shallower leaf). */
  population: z.number().int(),
  leaves: z.number().int(),
});
export const residualStageView = z.object({
  /** 1 = the first stage (1..S). */
  stage: z.number().int(),
  bits: z.number().int(),
  /** Rows first … first + count − 1 of the table. */
  first: z.number().int(),
  count: z.number().int(),
  /**
   * A signed stage (every stage after the first, and the first of a mean-removed codebook) holds corrections around
   * zero: a tile is drawn 128 + 127·v/scale, so mid-grey is 0, white +scale and black −scale (0..255 units).
   * null for an unsigned stage, drawn as the block it reconstructs.
   */
  scale: z.number().nullable(),
  /** Training vectors per codeword of the stage. */
  usage: z.array(z.number().int()),
});
export const codebookStructureResponse = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('full') }),
  z.object({ kind: z.literal('entropy-constrained') }),
  z.object({
    kind: z.literal('tree'),
    balanced: z.boolean(),
    /** Longest path, levels below the root. */
    depth: z.number().int(),
    leaves: z.number().int(),
    levels: z.array(treeLevelView),
  }),
  z.object({
    kind: z.literal('residual'),
    search: z.union([z.object({ kind: z.literal('greedy') }), z.object({ kind: z.literal('m-best'), m: z.number().int() })]),
    stages: z.array(residualStageView),
  }),
]);
export type CodebookStructureView = z.infer<typeof codebookStructureResponse>;
export type TreeLevelView = z.infer<typeof treeLevelView>;
export type ResidualStageView = z.infer<typeof residualStageView>;

/**
 * GET …/codebooks/:codebookId/reconstruction/:imageId/steps: one image coded once with a tree or residual codebook,
 * measured at every step: a tree's descent stopped at level 0 … depth, a residual codebook's stages 1, 1+2, … summed.
 * Every step decodes a prefix of the one coding the codebook's own search made (a tree path cut after L branches,
 * the first s stage indices; with M-best search those need not be the nearest stage-1 codewords alone). The last step
 * is the full reconstruction. 404 for a flat codebook.
 */
export const structureStepView = z.object({
  /** Tree: level (0 = the root's codeword for every block). Residual: stages summed (1..S). */
  step: z.number().int(),
  /** Mean index bits a block spends to reach this step. */
  indexBits: z.number(),
  /** Per pixel component, 0..255 scale, against the same source the full reconstruction is measured on. */
  mse: z.number(),
  /** 10·log10(255²/MSE) dB; null when exact. */
  psnr: z.number().nullable(),
});
export const structureStepsResponse = z.object({
  codebookId: z.number().int(),
  imageId: z.number().int(),
  kind: z.enum(['tree-level', 'residual-stages']),
  steps: z.array(structureStepView),
});
export type StructureStepsInfo = z.infer<typeof structureStepsResponse>;
export type StructureStepView = z.infer<typeof structureStepView>;

/**
 * GET …/reconstruction/:imageId/steps?step=N: that step's reconstruction as a PNG instead of the figures (404 for a
 * step the codebook lacks: a tree's levels are 0..depth, residual stages 1..S).
 */
export const structureStepsQuery = z
  .object({
    step: z
      .string()
      .regex(/^(0|[1-9][0-9]?)$/, 'Expected a whole number from 0 to 99')
      .transform(Number)
      .optional(),
  })
  .strict();
