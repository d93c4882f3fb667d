import { z } from 'zod';
import {
  COLOR_MODES, createRunBody, initMethodSchema, parseLambdaList, RESIDUAL_DEFAULT_STAGES, RUN_DEFAULTS, RUN_STRUCTURES, SETTING_LABELS, TREE_GROWTHS, type ColorMode, type CreateRunBody, type InitMethod,
  type RunStructure, type TreeGrowthKind,
} from '../../../server/contracts';
import { planRun, type ImageCatalog, type PlanInput } from './run-plan';

export type RunFormValues = {
  name: string;
  notes: string;
  trainingBy: 'set' | 'images';
  trainingSetId: number | null;
  trainingImageIds: number[];
  heldOutBy: 'set' | 'images';
  heldOutSetId: number | null;
  heldOutImageIds: number[];
  patch: { width: number; height: number };
  /** null: the patch side (non-overlapping patches). */
  stride: number | null;
  color: ColorMode;
  meanBits: number;
  bitsMode: 'single' | 'range';
  bits: number;
  bitsFrom: number;
  bitsTo: number;
  init: InitMethod;
  epsilon: number;
  maxIterations: number;
  maxVectors: number;
  seed: number;
  /** Entropy-constrained VQ: a λ list as a person writes it ("50,200,800" or A..B:N); empty for full search only. */
  lambdas: string;
  /** What the run trains per b: full search, a tree balanced to depth b, or residual stages sharing b. */
  structure: RunStructure;
  /** Tree: balanced to depth b, or greedy and pruned to a mean path of b bits. */
  growth: TreeGrowthKind;
  /** Residual: stages S; M of the M-best search (1 is greedy); joint refinement passes. */
  stages: number;
  mBest: number;
  refinementPasses: number;
};

/** The form's λ list: none when the field is empty, else the values or what is wrong with the text. */
function lambdasOf(v: RunFormValues): { values: number[] } | { error: string } | null {
  const text = v.lambdas.trim();
  return text === '' ? null : parseLambdaList(text);
}

export const emptyRunForm: RunFormValues = {
  name: '',
  notes: '',
  trainingBy: 'set',
  trainingSetId: null,
  trainingImageIds: [],
  heldOutBy: 'set',
  heldOutSetId: null,
  heldOutImageIds: [],
  patch: { width: 4, height: 4 },
  stride: null,
  color: RUN_DEFAULTS.color,
  meanBits: RUN_DEFAULTS.meanBits,
  bitsMode: 'single',
  bits: 8,
  bitsFrom: 1,
  bitsTo: 8,
  init: RUN_DEFAULTS.init,
  epsilon: RUN_DEFAULTS.epsilon,
  maxIterations: RUN_DEFAULTS.maxIterations,
  maxVectors: RUN_DEFAULTS.maxVectors,
  seed: RUN_DEFAULTS.seed,
  lambdas: '',
  structure: 'full',
  growth: 'balanced',
  stages: RESIDUAL_DEFAULT_STAGES,
  mBest: 1,
  refinementPasses: 0,
};

/** The POST body the form's values stand for; every option is sent, so the run records exactly what was chosen. */
export function toRunBody(v: RunFormValues): Record<string, unknown> {
  const notes = v.notes.trim();
  return {
    name: v.name,
    ...(notes ? { notes } : {}),
    ...(v.trainingBy === 'set' ? { trainingSetId: v.trainingSetId ?? undefined } : { trainingImageIds: v.trainingImageIds }),
    ...(v.heldOutBy === 'set' ? { heldOutSetId: v.heldOutSetId ?? undefined } : { heldOutImageIds: v.heldOutImageIds }),
    patch: { width: v.patch.width, height: v.patch.height },
    ...(v.stride === null ? {} : { stride: v.stride }),
    color: v.color,
    meanBits: v.meanBits,
    bits: v.bitsMode === 'single' ? v.bits : { from: v.bitsFrom, to: v.bitsTo },
    init: v.init,
    epsilon: v.epsilon,
    maxIterations: v.maxIterations,
    maxVectors: v.maxVectors,
    seed: v.seed,
    ...(() => {
      const parsed = lambdasOf(v);
      return parsed && 'values' in parsed ? { lambdas: parsed.values } : {};
    })(),
    ...(v.structure === 'full' ? {} : { structure: v.structure }),
    // Balanced is the server's default growth: the body leaves it out, as it does M = 1.
    ...(v.structure === 'tree' && v.growth !== 'balanced' ? { growth: v.growth } : {}),
    ...(v.structure === 'residual'
      ? { stages: v.stages, ...(v.mBest > 1 ? { mBest: v.mBest } : {}), ...(v.refinementPasses > 0 ? { refinementPasses: v.refinementPasses } : {}) }
      : {}),
  };
}

/** A stored run's configuration as form values ("run again with changes"); options it left out get the server's defaults. */
export function fromRunConfig(config: CreateRunBody, name: string): RunFormValues {
  const range = typeof config.bits === 'number' ? null : config.bits;
  return {
    ...emptyRunForm,
    name,
    notes: config.notes ?? '',
    trainingBy: config.trainingImageIds ? 'images' : 'set',
    trainingSetId: config.trainingSetId ?? null,
    trainingImageIds: config.trainingImageIds ?? [],
    heldOutBy: config.heldOutImageIds ? 'images' : 'set',
    heldOutSetId: config.heldOutSetId ?? null,
    heldOutImageIds: config.heldOutImageIds ?? [],
    patch: { ...config.patch },
    stride: config.stride ?? null,
    color: config.color ?? RUN_DEFAULTS.color,
    meanBits: config.meanBits ?? RUN_DEFAULTS.meanBits,
    bitsMode: range ? 'range' : 'single',
    bits: range ? range.to : (config.bits as number),
    bitsFrom: range ? range.from : Math.min(1, config.bits as number),
    bitsTo: range ? range.to : (config.bits as number),
    init: config.init ?? RUN_DEFAULTS.init,
    epsilon: config.epsilon ?? RUN_DEFAULTS.epsilon,
    maxIterations: config.maxIterations ?? RUN_DEFAULTS.maxIterations,
    maxVectors: config.maxVectors ?? RUN_DEFAULTS.maxVectors,
    seed: config.seed ?? RUN_DEFAULTS.seed,
    lambdas: config.lambdas?.join(',') ?? '',
    structure: config.structure ?? 'full',
    growth: config.growth ?? 'balanced',
    stages: config.stages ?? RESIDUAL_DEFAULT_STAGES,
    mBest: config.mBest ?? 1,
    refinementPasses: config.refinementPasses ?? 0,
  };
}

export function toPlanInput(v: RunFormValues): PlanInput {
  return {
    training: v.trainingBy === 'set' ? { by: 'set', setId: v.trainingSetId } : { by: 'images', imageIds: v.trainingImageIds },
    heldOut: v.heldOutBy === 'set' ? { by: 'set', setId: v.heldOutSetId } : { by: 'images', imageIds: v.heldOutImageIds },
    patch: v.patch,
    stride: v.stride,
    color: v.color,
    meanBits: v.meanBits,
    bits: v.bitsMode === 'single' ? { from: v.bits, to: v.bits } : { from: v.bitsFrom, to: v.bitsTo },
    maxVectors: v.maxVectors,
  };
}

const labels: Record<string, string> = {
  name: 'Name',
  notes: 'Notes',
  'patch.width': 'Patch width',
  'patch.height': 'Patch height',
  stride: SETTING_LABELS.stride,
  meanBits: 'Mean bits',
  bits: 'Bit budget b',
  bitsFrom: 'Lowest b',
  bitsTo: 'Highest b',
  epsilon: 'ε',
  maxIterations: 'Maximum iterations',
  maxVectors: 'Vector cap',
  seed: 'Seed',
  lambdas: 'λ list',
  growth: 'Growth',
  stages: 'Stages',
  mBest: 'M (M-best search)',
  refinementPasses: 'Refinement passes',
};

/** Where a contract issue about the body belongs in the form. */
function formPath(bodyPath: string, v: RunFormValues): string {
  if (bodyPath === 'bits.from') return 'bitsFrom';
  if (bodyPath === 'bits.to') return 'bitsTo';
  if (bodyPath === 'bits' && v.bitsMode === 'range') return 'bitsTo';
  if (bodyPath.startsWith('training')) return v.trainingBy === 'set' ? 'trainingSetId' : 'trainingImageIds';
  if (bodyPath.startsWith('heldOut')) return v.heldOutBy === 'set' ? 'heldOutSetId' : 'heldOutImageIds';
  return bodyPath;
}

/** The contract's issues in words; the bounds themselves come from the shared schema's own issue. */
function explain(issue: z.core.$ZodIssue, path: string): string {
  const label = labels[path] ?? path;
  if (path === 'trainingSetId' || path === 'trainingImageIds') return 'Choose the training images.';
  if (path === 'heldOutSetId' || path === 'heldOutImageIds') return 'Choose the held-out images.';
  if (path === 'name' && issue.code === 'too_small') return 'Give the run a name.';
  switch (issue.code) {
    case 'invalid_type':
      return issue.expected === 'int' ? `${label} must be a whole number.` : `Enter a number for ${label.toLowerCase()}.`;
    case 'too_small':
      return issue.inclusive === false ? `${label} must be above ${String(issue.minimum)}.` : `${label} must be at least ${String(issue.minimum)}.`;
    case 'too_big':
      return issue.origin === 'string' ? `${label} is too long (at most ${String(issue.maximum)} characters).` : `${label} must be at most ${String(issue.maximum)}.`;
    default:
      return path === 'bitsFrom' ? 'The lowest b must not exceed the highest.' : `${label}: ${issue.message}`;
  }
}

/** Flattens a union's issues into those of the branch the form meant (a number, or a {from, to} range). */
function flatten(issues: readonly z.core.$ZodIssue[], v: RunFormValues): z.core.$ZodIssue[] {
  return issues.flatMap((issue) => {
    if (issue.code !== 'invalid_union') return [issue];
    const branch = issue.errors[v.bitsMode === 'single' ? 0 : 1] ?? issue.errors[0] ?? [];
    return flatten(branch.map((inner) => ({ ...inner, path: [...issue.path, ...inner.path] })), v);
  });
}

const num = (what: string) => z.number({ error: `Enter a number for ${what}` });
const formFields = z.object({
  name: z.string(),
  notes: z.string(),
  trainingBy: z.enum(['set', 'images']),
  trainingSetId: z.number().nullable(),
  trainingImageIds: z.array(z.number()),
  heldOutBy: z.enum(['set', 'images']),
  heldOutSetId: z.number().nullable(),
  heldOutImageIds: z.array(z.number()),
  patch: z.object({ width: num('patch width'), height: num('patch height') }),
  stride: num('the patch stride').nullable(),
  color: z.enum(COLOR_MODES),
  meanBits: num('mean bits'),
  bitsMode: z.enum(['single', 'range']),
  bits: num('b'),
  bitsFrom: num('the lowest b'),
  bitsTo: num('the highest b'),
  init: initMethodSchema,
  epsilon: num('ε'),
  maxIterations: num('maximum iterations'),
  maxVectors: num(`the ${SETTING_LABELS.maxVectors.toLowerCase()}`),
  seed: num('the seed'),
  lambdas: z.string(),
  structure: z.enum(RUN_STRUCTURES),
  growth: z.enum(TREE_GROWTHS),
  stages: num('the stages'),
  mBest: num('M'),
  refinementPasses: num('the refinement passes'),
});

/**
 * The form's schema: its fields, then the shared contract (createRunBody) applied to the body they make, then the
 * checks that need the images (held-out present, no image on both sides, enough vectors for 2^b codewords). Its
 * output is the body to POST.
 */
export function runFormSchema(catalog: ImageCatalog) {
  return formFields
    .superRefine((values, ctx) => {
      const v = values as RunFormValues;
      const parsed = createRunBody.safeParse(toRunBody(v));
      const seen = new Set<string>();
      if (!parsed.success) {
        for (const issue of flatten(parsed.error.issues, v)) {
          const path = formPath(issue.path.map(String).join('.'), v);
          if (seen.has(path)) continue;
          seen.add(path);
          ctx.addIssue({ code: 'custom', path: path.split('.'), message: explain(issue, path) });
        }
      }
      const lambdas = lambdasOf(v);
      if (lambdas && 'error' in lambdas && !seen.has('lambdas')) {
        seen.add('lambdas');
        ctx.addIssue({ code: 'custom', path: ['lambdas'], message: `λ list: ${lambdas.error}` });
      }
      for (const problem of planRun(toPlanInput(v), catalog).problems) {
        const path =
          problem.field === 'bits' ? (v.bitsMode === 'single' ? 'bits' : 'bitsTo') : formPath(problem.field, v);
        if (seen.has(path)) continue;
        seen.add(path);
        ctx.addIssue({ code: 'custom', path: path.split('.'), message: problem.message });
      }
    })
    .transform((values) => createRunBody.parse(toRunBody(values as RunFormValues)));
}

/** The server's `validation_failed` details ([{path, message}]) as form paths and messages. */
export function serverIssues(details: unknown, v: RunFormValues): { path: string; message: string }[] {
  if (!Array.isArray(details)) return [];
  return details.flatMap((entry: unknown) => {
    if (typeof entry !== 'object' || entry === null) return [];
    const { path, message } = entry as { path?: unknown; message?: unknown };
    if (typeof path !== 'string' || typeof message !== 'string') return [];
    return [{ path: formPath(path, v), message: message.charAt(0).toUpperCase() + message.slice(1) }];
  });
}
