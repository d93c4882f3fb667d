import {
  codedBits, entropyBits, parseLambdaList, parseStages, RUN_STRUCTURE_LABELS, RUN_STRUCTURES, TRAINABLE_STRUCTURES, trainCodebooks, trainEntropyConstrained,
  type Codebook, type RunStructure, type TrainCodebooksOptions,
} from '../engine';
import { choiceOption, stringOption, type OptionSpec, type ParsedOptions } from './args';
import { CliUsageError } from './cli-error';

/** Options read by structurePlan(); `train` and `sweep` accept them. */
export const structureOptionSpec: OptionSpec = {
  structure: { type: 'string' },
  stages: { type: 'string' },
  lambda: { type: 'string' },
};

/** What a command trains: full search (entropy-constrained when λ values are given), a tree, or residual stages. */
export type StructurePlan =
  | { structure: 'full'; lambdas: number[] | null }
  | { structure: 'tree' }
  | { structure: 'residual'; stageBits: number[] };

/** Reads --structure, --stages and --lambda (the run vocabulary's names and limits) into a plan; `bits` is --bits B. */
export function structurePlan(values: ParsedOptions, bits: number | undefined): StructurePlan {
  const structure: RunStructure = choiceOption(values, 'structure', RUN_STRUCTURES) ?? 'full';
  const lambdaText = stringOption(values, 'lambda');
  const stagesText = stringOption(values, 'stages');
  if (lambdaText !== undefined && structure !== 'full') throw new CliUsageError('--lambda trains entropy-constrained full-search codebooks; it does not combine with --structure ' + structure);
  if (stagesText !== undefined && structure !== 'residual') throw new CliUsageError('--stages needs --structure residual');
  let plan: StructurePlan;
  if (structure === 'residual') {
    const parsed = parseStages(stagesText ?? '2', bits);
    if ('error' in parsed) throw new CliUsageError(parsed.error);
    plan = { structure, stageBits: parsed.bits };
  } else if (structure === 'tree') {
    plan = { structure };
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
 * trainCodebooks gives them), or one entropy-constrained codebook per λ from a full-search codebook of 2^bits.
 */
export async function trainStructured(plan: StructurePlan, vectors: Float32Array, dimension: number, options: TrainCodebooksOptions & { bits: number }, onLambda?: (done: number, total: number, lambda: number) => void): Promise<Codebook[]> {
  switch (plan.structure) {
    case 'full':
      if (plan.lambdas === null) return trainCodebooks(vectors, dimension, options);
      return trainEntropyConstrained(vectors, dimension, { ...options, lambdas: plan.lambdas, onLambda });
    case 'tree':
    case 'residual':
      throw new CliUsageError(`--structure ${plan.structure}: training is not wired into the command line yet`);
  }
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
