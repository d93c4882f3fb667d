import {
  BITS, codedBits, entropyBits, M_BEST, MAX_SIZE, parseLambdaList, parseStages, RESIDUAL_DEFAULT_STAGES, RESIDUAL_MAX_REFINEMENT_PASSES, RUN_STRUCTURE_LABELS, RUN_STRUCTURES, STAGES,
  TRAINABLE_STRUCTURES, trainCodebooks, trainEntropyConstrained, trainResidualCodebook, trainTreeCodebook, TREE_GROWTHS, TREE_MAX_DEPTH,
  type Codebook, type RunStructure, type TrainCodebooksOptions, type TreeGrowthKind,
} from '../engine';
import { choiceOption, intOption, numberOption, stringOption, type OptionSpec, type ParsedOptions } from './args';
import { CliUsageError } from './cli-error';

/** Options read by structurePlan(); `train` and `sweep` accept them. */
export const structureOptionSpec: OptionSpec = {
  structure: { type: 'string' },
  stages: { type: 'string' },
  lambda: { type: 'string' },
  growth: { type: 'string' },
  leaves: { type: 'string' },
  'prune-rate': { type: 'string' },
  'm-best': { type: 'string' },
  refine: { type: 'string' },
};

/** The structure options' help lines, for `train` and `sweep` alike (one text). */
export const STRUCTURE_HELP = `Structure:
  --structure KIND      ${RUN_STRUCTURES.map((k) => `${k}: ${RUN_STRUCTURE_LABELS[k]}`).join(', ')} (default full)
  --growth balanced|greedy
                        tree: balanced to depth B (default; B bits a block, 2^(B+1) − 1 nodes, B ≤ ${BITS.max - 1}), or grown
                        greedily, best split per bit first (Riskin & Gray 1991), to a mean path of B bits
  --leaves N            greedy tree: at most N leaves (default 2^B, at most ${(MAX_SIZE + 1) / 2})
  --prune-rate R        greedy tree: prune by the distortion/rate trade-off (generalized BFOS) to a mean path ≤ R bits
  --stages S|b1,b2,…    residual: S stages sharing the B bits (earlier stages take the extra bit), or each stage's bits
                        (then --bits may be left out: it is their sum); ${STAGES.min}..${STAGES.max} stages, table Σ 2^b_s codewords
  --m-best M            residual: encode keeping the M best partial sums per stage (${M_BEST.min}..${M_BEST.max}; default greedy)
  --refine N            residual: N joint refinement passes after the stage-by-stage design (0..${RESIDUAL_MAX_REFINEMENT_PASSES}, default 0)
`;

/** Index bits a command trains for when --bits is left out: the sum of an explicit residual stage list. */
export function impliedBits(values: ParsedOptions): number | undefined {
  const stages = stringOption(values, 'stages');
  if (values.structure !== 'residual' || stages === undefined || !stages.includes(',')) return undefined;
  const parsed = parseStages(stages, undefined);
  return 'bits' in parsed ? parsed.bits.reduce((a, b) => a + b, 0) : undefined;
}

/** The --bits range a structure accepts: a residual codebook reaches past full search's BITS.max (its table stays Σ 2^b_s). */
export function bitsRange(values: ParsedOptions): { min: number; max: number } {
  return values.structure === 'residual' ? { min: 1, max: STAGES.max * BITS.max } : BITS;
}

/** What a command trains: full search (entropy-constrained when λ values are given), a tree, or residual stages. */
export type StructurePlan =
  | { structure: 'full'; lambdas: number[] | null }
  | { structure: 'tree'; growth: TreeGrowthKind; leaves: number | null; pruneRate: number | null }
  | { structure: 'residual'; stagesText: string; stageBits: number[]; mBest: number | null; refine: number };

/** Options that belong to one structure only: giving them with another is refused rather than ignored. */
const OWN_OPTIONS: Record<string, RunStructure> = { growth: 'tree', leaves: 'tree', 'prune-rate': 'tree', stages: 'residual', 'm-best': 'residual', refine: 'residual' };

/** Reads --structure, --stages and --lambda (the run vocabulary's names and limits) into a plan; `bits` is --bits B. */
export function structurePlan(values: ParsedOptions, bits: number | undefined): StructurePlan {
  const structure: RunStructure = choiceOption(values, 'structure', RUN_STRUCTURES) ?? 'full';
  const lambdaText = stringOption(values, 'lambda');
  const stagesText = stringOption(values, 'stages');
  if (lambdaText !== undefined && structure !== 'full') throw new CliUsageError('--lambda trains entropy-constrained full-search codebooks; it does not combine with --structure ' + structure);
  for (const [name, owner] of Object.entries(OWN_OPTIONS)) {
    if (values[name] !== undefined && structure !== owner) throw new CliUsageError(`--${name} needs --structure ${owner}`);
  }
  let plan: StructurePlan;
  if (structure === 'residual') {
    const text = stagesText ?? String(RESIDUAL_DEFAULT_STAGES);
    const parsed = parseStages(text, bits);
    if ('error' in parsed) throw new CliUsageError(parsed.error);
    const total = parsed.bits.reduce((a, b) => a + b, 0);
    if (bits !== undefined && total !== bits) throw new CliUsageError(`--stages ${text} is ${total} bits a block, --bits says ${bits}; give one of them or make them agree`);
    plan = { structure, stagesText: text, stageBits: parsed.bits, mBest: intOption(values, 'm-best', M_BEST) ?? null, refine: intOption(values, 'refine', { min: 0, max: RESIDUAL_MAX_REFINEMENT_PASSES }) ?? 0 };
  } else if (structure === 'tree') {
    const growth = choiceOption(values, 'growth', TREE_GROWTHS) ?? 'balanced';
    if (growth === 'balanced' && (values.leaves !== undefined || values['prune-rate'] !== undefined)) throw new CliUsageError('--leaves and --prune-rate shape a greedy tree: add --growth greedy');
    if (growth === 'balanced' && bits !== undefined && bits > BITS.max - 1) throw new CliUsageError(`a balanced tree of depth ${bits} has ${2 ** (bits + 1) - 1} nodes; the table holds ${MAX_SIZE}: --bits at most ${BITS.max - 1}`);
    plan = {
      structure, growth,
      leaves: intOption(values, 'leaves', { min: 1, max: (MAX_SIZE + 1) / 2 }) ?? null,
      pruneRate: numberOption(values, 'prune-rate', { min: 0, max: TREE_MAX_DEPTH }) ?? null,
    };
  } else {
    const parsed = lambdaText === undefined ? null : parseLambdaList(lambdaText);
    if (parsed && 'error' in parsed) throw new CliUsageError(`--lambda: ${parsed.error}`);
    plan = { structure, lambdas: parsed ? parsed.values : null };
  }
  if (!TRAINABLE_STRUCTURES.includes(plan.structure)) {
    // Parsed and planned; the training of this structure is wired in with its engine (trainStructured below).
    throw new CliUsageError(`--structure ${plan.structure}: ${RUN_STRUCTURE_LABELS[plan.structure].toLowerCase()} training is not wired into the command line yet; train full search (with --lambda for entropy-constrained)`);
  }
  return plan;
}

/**
 * Trains what the plan names, one function per structure: full search (every size a split init passes through, as
 * trainCodebooks gives them), one entropy-constrained codebook per λ from a full-search codebook of 2^bits, one tree
 * (balanced to depth bits, or greedy to a mean path of bits), or one residual codebook of the plan's stages.
 */
export async function trainStructured(
  plan: StructurePlan, vectors: Float32Array, dimension: number, options: TrainCodebooksOptions & { bits: number },
  onLambda?: (done: number, total: number, lambda: number) => void, onStructureStep?: (p: { step: number; distortion: number }) => void,
): Promise<Codebook[]> {
  switch (plan.structure) {
    case 'full':
      if (plan.lambdas === null) return trainCodebooks(vectors, dimension, options);
      return trainEntropyConstrained(vectors, dimension, { ...options, lambdas: plan.lambdas, onLambda });
    case 'tree': {
      const growth = plan.growth === 'balanced'
        ? ({ kind: 'balanced', depth: options.bits } as const)
        : ({ kind: 'greedy', rate: options.bits, leaves: plan.leaves ?? Math.min(2 ** options.bits, (MAX_SIZE + 1) / 2), maxDepth: TREE_MAX_DEPTH } as const);
      const { onProgress, onIteration, ...rest } = options;
      void onProgress;
      void onIteration;
      const r = await trainTreeCodebook(vectors, dimension, { ...rest, growth, ...(plan.pruneRate !== null ? { prune: { rate: plan.pruneRate } } : {}), onStep: onStructureStep });
      return [r.codebook];
    }
    case 'residual': {
      const { onProgress, onIteration, ...rest } = options;
      void onProgress;
      void onIteration;
      const r = await trainResidualCodebook(vectors, dimension, {
        ...rest, stageBits: plan.stageBits, refinementPasses: plan.refine, search: plan.mBest === null ? { kind: 'greedy' } : { kind: 'm-best', m: plan.mBest }, onStep: onStructureStep,
      });
      return [r.codebook];
    }
  }
}

/** Table codewords the plan's largest single search needs distinct training vectors for (the image sampler's check). */
export function trainingTableSize(plan: StructurePlan, bits: number): number {
  return plan.structure === 'residual' ? 2 ** Math.max(...plan.stageBits) : 2 ** bits;
}

/** Figures of an entropy-constrained codebook on its training vectors: index entropy and its Huffman code's mean length, bits per vector. */
export function huffmanFigures(book: Codebook): { lambda: number; entropy: number; huffmanBits: number } | null {
  if (book.structure.kind !== 'entropy-constrained') return null;
  const n = book.usage.reduce((a, b) => a + b, 0);
  return { lambda: book.structure.lambda, entropy: entropyBits(book.usage), huffmanBits: codedBits(book.structure.codeLengths, book.usage) / n };
}

/** Where the codebook of one λ goes when several are trained: OUT.json → OUT.lambda-<λ>.json. */
export function lambdaOutPath(out: string, lambda: number): string {
  const dot = out.lastIndexOf('.');
  const slash = Math.max(out.lastIndexOf('/'), out.lastIndexOf('\\'));
  const [stem, ext] = dot > slash ? [out.slice(0, dot), out.slice(dot)] : [out, ''];
  return `${stem}.lambda-${lambda}${ext}`;
}
