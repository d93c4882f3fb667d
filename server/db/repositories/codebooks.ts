import type { StructureKind } from '../../engine/vocabulary';
import { iso, parseJson } from '../rows';
import { insertedId, type Executor } from './executor';

export interface TraceRow {
  size: number;
  iteration: number;
  distortion: number;
  emptyRepaired: number;
  elapsedMs: number;
  redecided?: number;
}

export interface NewCodebook {
  teamId: number;
  runId: number | null;
  name: string;
  source: 'trained' | 'imported';
  bits: number;
  size: number;
  dimension: number;
  patch: { width: number; height: number };
  channels: 1 | 3;
  color: 'luma' | 'rgb';
  meanBits: number;
  codewords: Float32Array; // size × dimension, row-major
  usage: number[];
  cellDistortion: number[] | null;
  trace: TraceRow[];
  /**
   * The export document without codewords. Its usage and training.trace are the `usage` and `trace` above and are
   * stored only there; the rest goes to the metadata column.
   */
  metadata: Record<string, unknown>;
  checksum: string;
}

/** What the codebook and run lists show: no document, histogram or trace (an imported one may carry megabytes of them). */
export interface CodebookSummaryRecord {
  id: number;
  teamId: number;
  runId: number | null;
  /** The run's name, or null for an imported codebook. */
  runName: string | null;
  name: string;
  source: 'trained' | 'imported';
  bits: number;
  size: number;
  dimension: number;
  patch: { width: number; height: number };
  channels: 1 | 3;
  color: 'luma' | 'rgb';
  meanBits: number;
  /** The structure's kind (the document's structure.kind; full for revision 1), and λ when entropy-constrained. */
  structure: StructureKind;
  lambda: number | null;
  checksum: string;
  /** training.distortion: MSE per vector component on the training vectors. */
  distortion: number;
  /** training.iterations: Lloyd updates at the final size. */
  iterations: number;
  createdAt: string;
}

export interface CodebookRecord extends CodebookSummaryRecord {
  usage: number[];
  cellDistortion: number[] | null;
  trace: TraceRow[];
  /** The export document without codewords, put back together (usage and training.trace included). */
  metadata: Record<string, unknown>;
}

export interface CodebookWithCodewords extends CodebookRecord {
  codewords: Float32Array; // size × dimension, row-major
}

interface CodebookRow {
  id: number;
  team_id: number;
  run_id: number | null;
  run_name: string | null;
  name: string;
  source: 'trained' | 'imported';
  bits: number;
  size: number;
  dimension: number;
  patch_width: number;
  patch_height: number;
  channels: number;
  color: 'luma' | 'rgb';
  mean_bits: number;
  structure: StructureKind;
  lambda: number | null;
  checksum: string;
  distortion: number;
  iterations: number;
  created_at: Date;
}

interface FullCodebookRow extends CodebookRow {
  codewords: Buffer;
  usage: unknown;
  cell_distortion: unknown;
  trace: unknown;
  metadata: unknown;
}

/** float32 little-endian, whatever the host's byte order, so the stored bytes are exactly what the checksum covers. */
export function codewordsToBytes(codewords: Float32Array): Buffer {
  const out = Buffer.allocUnsafe(codewords.length * 4);
  for (let i = 0; i < codewords.length; i += 1) out.writeFloatLE(codewords[i], 4 * i);
  return out;
}

/** The driver's Buffer may sit at any offset of a shared pool, so it is read value by value rather than viewed. */
export function bytesToCodewords(bytes: Buffer): Float32Array {
  if (bytes.length % 4 !== 0) throw new Error(`codeword blob of ${bytes.length} bytes is not a whole number of float32s`);
  const out = new Float32Array(bytes.length / 4);
  for (let i = 0; i < out.length; i += 1) out[i] = bytes.readFloatLE(4 * i);
  return out;
}

// Only what a list shows: never metadata (training source), usage, cell distortion, trace or codewords.
const summaryColumns = [
  'c.id', 'c.team_id', 'c.run_id', 'r.name as run_name', 'c.name', 'c.source', 'c.bits', 'c.size', 'c.dimension',
  'c.patch_width', 'c.patch_height', 'c.channels', 'c.color', 'c.mean_bits', 'c.structure', 'c.lambda', 'c.checksum', 'c.distortion', 'c.iterations',
  'c.created_at',
];
const fullColumns = [...summaryColumns, 'c.usage', 'c.cell_distortion', 'c.trace', 'c.metadata', 'c.codewords'];

const toSummaryRecord = (r: CodebookRow): CodebookSummaryRecord => ({
  id: r.id,
  teamId: r.team_id,
  runId: r.run_id,
  runName: r.run_name,
  name: r.name,
  source: r.source,
  bits: r.bits,
  size: r.size,
  dimension: r.dimension,
  patch: { width: r.patch_width, height: r.patch_height },
  channels: r.channels === 3 ? 3 : 1,
  color: r.color,
  meanBits: r.mean_bits,
  structure: r.structure,
  lambda: r.lambda,
  checksum: r.checksum,
  distortion: r.distortion,
  iterations: r.iterations,
  createdAt: iso(r.created_at),
});

type Training = Record<string, unknown> & { trace?: unknown };

/** The metadata column: the document without usage and training.trace, which live in their own columns. */
function storedMetadata(metadata: Record<string, unknown>): Record<string, unknown> {
  const { usage: _usage, training, ...rest } = metadata;
  if (!training || typeof training !== 'object') return rest;
  const { trace: _trace, ...inner } = training as Training;
  return { ...rest, training: inner };
}

function toFullRecord(r: FullCodebookRow): CodebookWithCodewords {
  const usage = parseJson<number[]>(r.usage) ?? [];
  const trace = parseJson<TraceRow[]>(r.trace) ?? [];
  const stored = parseJson<Record<string, unknown>>(r.metadata) ?? {};
  const training = stored.training && typeof stored.training === 'object' ? { ...(stored.training as Training), trace } : undefined;
  return {
    ...toSummaryRecord(r),
    usage,
    cellDistortion: parseJson<number[]>(r.cell_distortion),
    trace,
    metadata: { ...stored, usage, ...(training ? { training } : {}) },
    codewords: bytesToCodewords(r.codewords),
  };
}

/** The document's structure kind and λ (a revision 1 document has no structure: full search). */
function structureIn(metadata: Record<string, unknown>): { structure: string; lambda: number | null } {
  const s = metadata.structure as { kind?: unknown; lambda?: unknown } | undefined;
  const kind = typeof s?.kind === 'string' ? s.kind : 'full';
  return { structure: kind, lambda: typeof s?.lambda === 'number' ? s.lambda : null };
}

const numberIn = (metadata: Record<string, unknown>, key: 'distortion' | 'iterations'): number => {
  const value = (metadata.training as Training | undefined)?.[key];
  if (typeof value !== 'number' || !Number.isFinite(value)) throw new Error(`codebook metadata has no finite training.${key}`);
  return value;
};

export function codebooksRepository(db: Executor) {
  const base = () => db('codebooks as c').leftJoin('runs as r', 'r.id', 'c.run_id');

  return {
    async insert(c: NewCodebook): Promise<number> {
      return insertedId(
        await db('codebooks').insert({
          team_id: c.teamId,
          run_id: c.runId,
          name: c.name,
          source: c.source,
          bits: c.bits,
          size: c.size,
          dimension: c.dimension,
          patch_width: c.patch.width,
          patch_height: c.patch.height,
          channels: c.channels,
          color: c.color,
          mean_bits: c.meanBits,
          ...structureIn(c.metadata),
          codewords: codewordsToBytes(c.codewords),
          usage: JSON.stringify(c.usage),
          cell_distortion: c.cellDistortion ? JSON.stringify(c.cellDistortion) : null,
          trace: JSON.stringify(c.trace),
          metadata: JSON.stringify(storedMetadata(c.metadata)),
          distortion: numberIn(c.metadata, 'distortion'),
          iterations: numberIn(c.metadata, 'iterations'),
          checksum: c.checksum,
        }),
      );
    },
    async deleteForRun(runId: number): Promise<number> {
      return Number(await db('codebooks').where({ run_id: runId }).delete());
    },
    async findForTeam(teamId: number, id: number): Promise<CodebookWithCodewords | null> {
      const row = (await base().where({ 'c.id': id, 'c.team_id': teamId }).first(fullColumns)) as FullCodebookRow | undefined;
      return row ? toFullRecord(row) : null;
    },
    /** For job handlers, which act on an id they were given. */
    async findById(id: number): Promise<CodebookWithCodewords | null> {
      const row = (await base().where({ 'c.id': id }).first(fullColumns)) as FullCodebookRow | undefined;
      return row ? toFullRecord(row) : null;
    },
    async listForTeam(teamId: number, limit = 1000): Promise<CodebookSummaryRecord[]> {
      const rows = (await base().where({ 'c.team_id': teamId }).orderBy('c.id', 'desc').limit(limit).select(summaryColumns)) as CodebookRow[];
      return rows.map(toSummaryRecord);
    },
    /** The team's codebooks among these ids, summary columns only. */
    async summariesForTeam(teamId: number, ids: number[]): Promise<CodebookSummaryRecord[]> {
      if (ids.length === 0) return [];
      const rows = (await base().where({ 'c.team_id': teamId }).whereIn('c.id', ids).orderBy('c.id').select(summaryColumns)) as CodebookRow[];
      return rows.map(toSummaryRecord);
    },
    /** The stored documents' `structure` members by codebook id (absent from a revision 1 document: full search). */
    async structuresOf(ids: number[]): Promise<Map<number, unknown>> {
      if (ids.length === 0) return new Map();
      const rows = (await db('codebooks').whereIn('id', ids).select('id', 'metadata')) as { id: number; metadata: unknown }[];
      return new Map(rows.map((r) => [r.id, parseJson<Record<string, unknown>>(r.metadata)?.structure]));
    },
    /** A run's codebooks, smallest first. */
    async listForRun(runId: number): Promise<CodebookSummaryRecord[]> {
      const rows = (await base().where({ 'c.run_id': runId }).orderBy('c.size').select(summaryColumns)) as CodebookRow[];
      return rows.map(toSummaryRecord);
    },
    /** Codewords included, for evaluating every codebook of a run. */
    async listForRunWithCodewords(runId: number): Promise<CodebookWithCodewords[]> {
      const rows = (await base().where({ 'c.run_id': runId }).orderBy('c.size').select(fullColumns)) as FullCodebookRow[];
      return rows.map(toFullRecord);
    },
  };
}

export type CodebooksRepository = ReturnType<typeof codebooksRepository>;
