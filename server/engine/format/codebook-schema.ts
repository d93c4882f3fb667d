import { z } from 'zod';
import { EngineInputError } from '../input-error';
import { codewordChecksum } from './checksum';
import { COLOR_MODES, initMethodSchema, LAMBDA, MEAN_BITS, M_BEST, STAGES } from '../vocabulary';
import { FLOAT32_ROUNDING_LIMIT, MAX_BITS, MAX_ITERATIONS, MAX_SIZE, MAX_SOURCE_LENGTH, MAX_TRACE_LENGTH, maxTraceLength } from './limits';
import { indexBits } from './rate-bits';
import { MAX_CODE_LENGTH } from '../core/huffman';
import type { CodebookStructure } from '../structures/types';
import { structureProblems } from './structure-check';

/**
 * The codebook export format ("cellwright-codebook", revision 2: revision 1 plus `structure`; a revision 1 document
 * reads as a full-search codebook). This zod schema is its single definition;
 * codebook.schema.json beside it is generated from it (codebook-json-schema.ts) and checked by a test.
 * Codewords are float32 values written as the shortest decimal that reads back to the same float32.
 */
export const CODEBOOK_FORMAT = 'cellwright-codebook';
/** The revision this build writes. */
export const CODEBOOK_VERSION = 2;
/** Every revision this build reads. */
export const CODEBOOK_VERSIONS = [1, 2] as const;
export { FLOAT32_MAX, MAX_BITS, MAX_ITERATIONS, MAX_SIZE, MAX_SOURCE_LENGTH, MAX_TRACE_LENGTH } from './limits';

const finite = () => z.number({ error: 'expected a finite number' });
/**
 * A codeword value: finite once rounded to float32, so what is stored (as binary32) is what a re-export writes. Written
 * as an exclusive range rather than a refinement so the generated JSON Schema carries it too.
 */
const float32 = () => {
  const error = 'expected a number finite as float32 (IEEE 754 binary32: magnitude below 3.4028235677973366e38)';
  return finite().gt(-FLOAT32_ROUNDING_LIMIT, { error }).lt(FLOAT32_ROUNDING_LIMIT, { error });
};
const integer = (min: number, max?: number) => {
  let s = z.int({ error: 'expected an integer' }).min(min, { error: `expected an integer ≥ ${min}` });
  if (max !== undefined) s = s.max(max, { error: `expected an integer ≤ ${max}` });
  return s;
};

export const patchSchema = z
  .strictObject({
    width: integer(2, 16).describe('patch width in pixels'),
    height: integer(2, 16).describe('patch height in pixels'),
    channels: z.union([z.literal(1), z.literal(3)], { error: 'expected 1 (luma) or 3 (rgb)' }),
    color: z.enum(COLOR_MODES, { error: 'expected "luma" or "rgb"' }),
  })
  .describe('Patch geometry; vector component ((row·width)+column)·channels+channel, channels R,G,B interleaved per pixel');

export const preprocessingSchema = z.discriminatedUnion(
  'kind',
  [
    z.strictObject({ kind: z.literal('none') }),
    z.strictObject({ kind: z.literal('mean-removed'), meanBits: integer(1, MEAN_BITS.max).describe('bits of the uniform scalar quantizer for block means') }),
  ],
  { error: 'expected {"kind":"none"} or {"kind":"mean-removed","meanBits":1..8}' },
);

export const iterationStatSchema = z.strictObject({
  size: integer(1, MAX_SIZE),
  iteration: integer(0, MAX_ITERATIONS),
  distortion: finite().min(0, { error: 'expected a number ≥ 0' }),
  emptyRepaired: integer(0),
  elapsedMs: finite().min(0, { error: 'expected a number ≥ 0' }),
  redecided: integer(0).optional().describe('near-ties re-decided by the exact search'),
});

export const trainingSchema = z.strictObject({
  source: z
    .string({ error: 'expected a string' })
    .max(MAX_SOURCE_LENGTH, { error: `expected at most ${MAX_SOURCE_LENGTH} characters` })
    .describe('what the codebook was trained on (folder or .npy file name)'),
  vectorCount: integer(1),
  init: initMethodSchema,
  epsilon: finite().min(0, { error: 'expected a number ≥ 0' }),
  seed: integer(0).nullable(),
  iterations: integer(0, MAX_ITERATIONS),
  distortion: finite().min(0, { error: 'expected a number ≥ 0' }).describe('MSE per vector component on the training vectors'),
  trace: z
    .array(iterationStatSchema, { error: 'expected an array' })
    .max(MAX_TRACE_LENGTH, { error: `expected at most ${MAX_TRACE_LENGTH} entries ((${MAX_BITS} + 1) sizes × (${MAX_ITERATIONS} + 1) passes)` })
    .describe('one entry per Lloyd pass; at most (bits + 1) × (maxIterations + 1)'),
  stride: integer(1).optional(),
  sample: integer(1).nullable().optional(),
  // 0 is what `cellwright train --max-iter 0` records: the starting codebook, not iterated.
  maxIterations: integer(0, MAX_ITERATIONS).optional(),
});

/**
 * How the table is searched and its indices coded (structures/types.ts, the shared in-memory shape), as JSON arrays.
 * Cross-field rules (one length per codeword, Kraft, a proper tree, stage sizes) are checked in structure-check.ts.
 */
export const structureSchema = z.discriminatedUnion(
  'kind',
  [
    z.strictObject({ kind: z.literal('full') }).describe('full search; index = ceil(log2 size) bits'),
    z
      .strictObject({
        kind: z.literal('entropy-constrained'),
        lambda: finite().min(LAMBDA.min, { error: `expected a number ≥ ${LAMBDA.min}` }).max(LAMBDA.max, { error: `expected a number ≤ ${LAMBDA.max}` }).describe('λ: squared error per vector traded for one index bit'),
        codeLengths: z.array(integer(1, MAX_CODE_LENGTH), { error: 'expected an array of code lengths' }).describe(`canonical Huffman code length of each codeword, 1..${MAX_CODE_LENGTH} bits`),
      })
      .describe('full search minimising squared error + λ·length; indices coded with the canonical Huffman code of these lengths'),
    z
      .strictObject({
        kind: z.literal('tree'),
        balanced: z.boolean({ error: 'expected true or false' }).describe('every leaf at the same depth b: paths are b bits'),
        children: z.array(integer(-1, MAX_SIZE - 1), { error: 'expected an array of node numbers' }).describe('2 entries per node (left, right), −1 for a leaf; node 0 the root, nodes in breadth-first order'),
      })
      .describe('binary tree over the table (every node has a codeword); the index is the path from the root, 0 = left'),
    z
      .strictObject({
        kind: z.literal('residual'),
        bits: z
          .array(integer(1, MAX_BITS), { error: 'expected an array of stage bits' })
          .min(STAGES.min, { error: `expected at least ${STAGES.min} stage` })
          .max(STAGES.max, { error: `expected at most ${STAGES.max} stages` })
          .describe('bits of each stage; stage s has 2^bits[s] codewords, stored one stage after another'),
        search: z.discriminatedUnion(
          'kind',
          [
            z.strictObject({ kind: z.literal('greedy') }),
            z.strictObject({ kind: z.literal('m-best'), m: integer(M_BEST.min, M_BEST.max) }),
          ],
          { error: `expected {"kind":"greedy"} or {"kind":"m-best","m":${M_BEST.min}..${M_BEST.max}}` },
        ),
      })
      .describe('residual stages; a block is the sum of one codeword per stage, its index the stage indices'),
  ],
  { error: 'expected a structure of kind "full", "entropy-constrained", "tree" or "residual"' },
);
export type StructureInfo = z.infer<typeof structureSchema>;

export const codebookDocumentSchema = z
  .strictObject({
    format: z.literal(CODEBOOK_FORMAT, { error: `expected "${CODEBOOK_FORMAT}"` }),
    version: z.union(CODEBOOK_VERSIONS.map((v) => z.literal(v)), { error: `expected ${CODEBOOK_VERSIONS.join(' or ')}` }),
    bits: integer(0, MAX_BITS).describe('fixed-length index bits, ceil(log2 size)'),
    size: integer(1, MAX_SIZE).describe('number of codewords K'),
    dimension: integer(1).describe('components per codeword'),
    patch: patchSchema.nullable().describe('null when trained from raw vectors without image geometry'),
    preprocessing: preprocessingSchema,
    codewords: z.array(z.array(float32(), { error: 'expected an array of numbers' }), { error: 'expected an array of codewords' }),
    usage: z.array(integer(0), { error: 'expected an array of counts' }).describe('training vectors per cell'),
    training: trainingSchema,
    structure: structureSchema.optional().describe('required from revision 2; absent in revision 1, which is full search'),
    checksum: z
      .string({ error: 'expected a string' })
      .regex(/^[0-9a-f]{64}$/, { error: 'expected 64 lowercase hex digits' })
      .describe('SHA-256 of the codewords as float32 little-endian bytes, row-major'),
  })
  .superRefine((doc, ctx) => {
    if (doc.version === 1 && doc.structure !== undefined) ctx.addIssue({ code: 'custom', path: ['structure'], message: 'revision 1 has no structure member (write version 2)' });
    if (doc.version >= 2 && doc.structure === undefined) ctx.addIssue({ code: 'custom', path: ['structure'], message: `expected a structure (revision ${doc.version})` });
    if (doc.structure) for (const p of structureProblems(doc.structure, doc.size)) ctx.addIssue({ code: 'custom', path: ['structure', ...p.path], message: p.message });
    if (doc.bits !== indexBits(doc.size)) {
      ctx.addIssue({ code: 'custom', path: ['bits'], message: `expected ${indexBits(doc.size)} (ceil(log2 ${doc.size}))` });
    }
    if (doc.patch) {
      const want = doc.patch.color === 'rgb' ? 3 : 1;
      if (doc.patch.channels !== want) ctx.addIssue({ code: 'custom', path: ['patch', 'channels'], message: `expected ${want} for color "${doc.patch.color}"` });
      const dim = doc.patch.width * doc.patch.height * doc.patch.channels;
      if (doc.dimension !== dim) ctx.addIssue({ code: 'custom', path: ['dimension'], message: `expected ${dim} (patch width × height × channels)` });
    } else if (doc.preprocessing.kind !== 'none') {
      ctx.addIssue({ code: 'custom', path: ['preprocessing'], message: 'mean removal needs a patch' });
    }
    if (doc.codewords.length !== doc.size) ctx.addIssue({ code: 'custom', path: ['codewords'], message: `expected ${doc.size} codewords (size), got ${doc.codewords.length}` });
    doc.codewords.forEach((row, i) => {
      if (row.length !== doc.dimension) ctx.addIssue({ code: 'custom', path: ['codewords', i], message: `expected ${doc.dimension} numbers (dimension), got ${row.length}` });
    });
    if (doc.usage.length !== doc.size) ctx.addIssue({ code: 'custom', path: ['usage'], message: `expected ${doc.size} counts (size), got ${doc.usage.length}` });
    const passes = doc.training.maxIterations ?? MAX_ITERATIONS;
    const most = maxTraceLength(doc.bits, passes);
    if (doc.training.trace.length > most) {
      ctx.addIssue({ code: 'custom', path: ['training', 'trace'], message: `expected at most ${most} entries ((bits ${doc.bits} + 1) sizes × (maxIterations ${passes} + 1) passes), got ${doc.training.trace.length}` });
    }
  });

export type CodebookDocument = z.infer<typeof codebookDocumentSchema>;
export type PatchInfo = z.infer<typeof patchSchema>;
export type TrainingInfo = z.infer<typeof trainingSchema>;
export type PreprocessingInfo = z.infer<typeof preprocessingSchema>;

/** A codebook in memory: the document with codewords and usage as typed arrays. */
export interface Codebook {
  bits: number;
  size: number;
  dimension: number;
  patch: PatchInfo | null;
  preprocessing: PreprocessingInfo;
  codewords: Float32Array; // size × dimension, row-major
  usage: Uint32Array; // size
  training: TrainingInfo;
  /** How the table is searched and its indices coded; `{ kind: 'full' }` for every revision 1 document. */
  structure: CodebookStructure;
  checksum: string;
}

/** The in-memory structure (typed arrays) of its JSON form. */
export function structureFromInfo(info: StructureInfo | undefined): CodebookStructure {
  if (!info || info.kind === 'full') return { kind: 'full' };
  if (info.kind === 'entropy-constrained') return { kind: info.kind, lambda: info.lambda, codeLengths: Uint8Array.from(info.codeLengths) };
  if (info.kind === 'tree') return { kind: 'tree', balanced: info.balanced, children: Int32Array.from(info.children) };
  return { kind: 'residual', bits: [...info.bits], search: info.search.kind === 'greedy' ? { kind: 'greedy' } : { kind: 'm-best', m: info.search.m } };
}

/** The JSON form of a structure (members in a fixed order). */
export function structureInfo(structure: CodebookStructure): StructureInfo {
  if (structure.kind === 'full') return { kind: 'full' };
  if (structure.kind === 'entropy-constrained') return { kind: structure.kind, lambda: structure.lambda, codeLengths: Array.from(structure.codeLengths) };
  if (structure.kind === 'tree') return { kind: 'tree', balanced: structure.balanced, children: Array.from(structure.children) };
  return { kind: 'residual', bits: [...structure.bits], search: structure.search.kind === 'greedy' ? { kind: 'greedy' } : { kind: 'm-best', m: structure.search.m } };
}

/** `codewords[3][7]` style path of a zod issue. */
export function issuePath(path: ReadonlyArray<PropertyKey>): string {
  let out = '';
  for (const key of path) out += typeof key === 'number' ? `[${key}]` : out === '' ? String(key) : `.${String(key)}`;
  return out || '(root)';
}

function toEngineError(error: z.ZodError, what: string): EngineInputError {
  const [first] = error.issues;
  const field = issuePath(first.path);
  const more = error.issues.length > 1 ? ` (and ${error.issues.length - 1} more problem${error.issues.length > 2 ? 's' : ''})` : '';
  return new EngineInputError('ENGINE_INVALID_CODEBOOK', `${what}: ${field}: ${first.message}${more}`, field);
}

/** Validates a parsed JSON value as a codebook document, including its checksum. */
export function parseCodebook(value: unknown, what = 'codebook'): Codebook {
  const parsed = codebookDocumentSchema.safeParse(value);
  if (!parsed.success) throw toEngineError(parsed.error, what);
  const doc = parsed.data;
  const codewords = new Float32Array(doc.size * doc.dimension);
  doc.codewords.forEach((row, i) => codewords.set(row, i * doc.dimension));
  const actual = codewordChecksum(codewords);
  if (actual !== doc.checksum) {
    throw new EngineInputError('ENGINE_CHECKSUM_MISMATCH', `${what}: checksum: does not match the codewords (stored ${doc.checksum.slice(0, 12)}…, computed ${actual.slice(0, 12)}…)`, 'checksum');
  }
  return {
    bits: doc.bits,
    size: doc.size,
    dimension: doc.dimension,
    patch: doc.patch,
    preprocessing: doc.preprocessing,
    codewords,
    usage: Uint32Array.from(doc.usage),
    training: doc.training,
    structure: structureFromInfo(doc.structure),
    checksum: doc.checksum,
  };
}

/** Parses codebook JSON text; a syntax error is reported as such, not as a schema failure. */
export function parseCodebookJson(text: string, what = 'codebook'): Codebook {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    throw new EngineInputError('ENGINE_INVALID_CODEBOOK', `${what}: not valid JSON (${error instanceof Error ? error.message : String(error)})`);
  }
  return parseCodebook(value, what);
}

/** Shortest decimal that reads back (through Math.fround) to the same float32. */
export function shortestFloat32(v: number): number {
  if (v === 0) return 0; // also folds −0, which JSON cannot tell apart anyway
  const fits = (p: number) => Math.fround(Number(v.toPrecision(p))) === v;
  // 9 significant digits always round-trip a binary32 value (IEEE 754-2008, 5.12.2); more digits never stop a value
  // from round-tripping, so the shortest count can be found by bisection.
  let lo = 1;
  let hi = 9;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (fits(mid)) hi = mid;
    else lo = mid + 1;
  }
  return Number(v.toPrecision(lo));
}

/** The JSON document of a codebook; `exact: false` skips the shortest-decimal search (for validation only). */
export function toCodebookDocument(codebook: Codebook, { exact = true } = {}): CodebookDocument {
  const rows: number[][] = [];
  const d = codebook.dimension;
  for (let i = 0; i < codebook.size; i += 1) {
    const row = Array.from(codebook.codewords.subarray(i * d, (i + 1) * d));
    if (exact) for (let k = 0; k < d; k += 1) row[k] = shortestFloat32(row[k]);
    rows.push(row);
  }
  return {
    format: CODEBOOK_FORMAT,
    version: CODEBOOK_VERSION,
    bits: codebook.bits,
    size: codebook.size,
    dimension: codebook.dimension,
    patch: codebook.patch,
    preprocessing: codebook.preprocessing,
    codewords: rows,
    usage: Array.from(codebook.usage),
    training: codebook.training,
    structure: structureInfo(codebook.structure),
    checksum: codebook.checksum,
  };
}

/** Codebook JSON text: two-space indentation, one codeword per line so large codebooks stay diffable and compact. */
export function serializeCodebook(codebook: Codebook): string {
  const doc = toCodebookDocument(codebook);
  const lines: string[] = [];
  const entries = Object.entries(doc);
  entries.forEach(([key, value], n) => {
    const comma = n < entries.length - 1 ? ',' : '';
    if (key === 'codewords') {
      const rows = (value as number[][]).map((row) => `    ${JSON.stringify(row)}`);
      lines.push(`  "codewords": [\n${rows.join(',\n')}\n  ]${comma}`);
    } else if (key === 'training') {
      const { trace, ...rest } = value as TrainingInfo;
      const inner = Object.entries(rest).map(([k, v]) => `    ${JSON.stringify(k)}: ${JSON.stringify(v)}`);
      const traceLines = trace.map((t) => `      ${JSON.stringify(t)}`);
      inner.push(`    "trace": [${traceLines.length ? `\n${traceLines.join(',\n')}\n    ` : ''}]`);
      lines.push(`  "training": {\n${inner.join(',\n')}\n  }${comma}`);
    } else {
      lines.push(`  ${JSON.stringify(key)}: ${JSON.stringify(value)}${comma}`);
    }
  });
  return `{\n${lines.join('\n')}\n}\n`;
}

/** Builds an in-memory codebook, computing bits and checksum, and validates it through the same schema as a parsed file. */
export function makeCodebook(fields: Omit<Codebook, 'bits' | 'checksum' | 'structure'> & { structure?: CodebookStructure }): Codebook {
  // −0 becomes +0: JSON writes both as 0, and the checksum must describe the codewords a reader will see.
  const codewords = fields.codewords.map((v) => (v === 0 ? 0 : v));
  const codebook: Codebook = { ...fields, structure: fields.structure ?? { kind: 'full' }, codewords, bits: indexBits(fields.size), checksum: codewordChecksum(codewords) };
  const parsed = codebookDocumentSchema.safeParse(toCodebookDocument(codebook, { exact: false }));
  if (!parsed.success) throw toEngineError(parsed.error, 'codebook');
  return codebook;
}
