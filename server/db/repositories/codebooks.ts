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
  /** The export document without codewords. */
  metadata: Record<string, unknown>;
  checksum: string;
}

export interface CodebookRecord extends Omit<NewCodebook, 'codewords'> {
  id: number;
  /** The run's name, or null for an imported codebook. */
  runName: string | null;
  createdAt: string;
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
  codewords?: Buffer;
  usage: unknown;
  cell_distortion: unknown;
  trace: unknown;
  metadata: unknown;
  checksum: string;
  created_at: Date;
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

const summaryColumns = [
  'c.id', 'c.team_id', 'c.run_id', 'r.name as run_name', 'c.name', 'c.source', 'c.bits', 'c.size', 'c.dimension',
  'c.patch_width', 'c.patch_height', 'c.channels', 'c.color', 'c.mean_bits', 'c.usage', 'c.cell_distortion', 'c.trace',
  'c.metadata', 'c.checksum', 'c.created_at',
];

const toRecord = (r: CodebookRow): CodebookRecord => ({
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
  usage: parseJson<number[]>(r.usage) ?? [],
  cellDistortion: parseJson<number[]>(r.cell_distortion),
  trace: parseJson<TraceRow[]>(r.trace) ?? [],
  metadata: parseJson<Record<string, unknown>>(r.metadata) ?? {},
  checksum: r.checksum,
  createdAt: iso(r.created_at),
});

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
          codewords: codewordsToBytes(c.codewords),
          usage: JSON.stringify(c.usage),
          cell_distortion: c.cellDistortion ? JSON.stringify(c.cellDistortion) : null,
          trace: JSON.stringify(c.trace),
          metadata: JSON.stringify(c.metadata),
          checksum: c.checksum,
        }),
      );
    },
    async deleteForRun(runId: number): Promise<number> {
      return Number(await db('codebooks').where({ run_id: runId }).delete());
    },
    async findForTeam(teamId: number, id: number): Promise<CodebookWithCodewords | null> {
      const row = (await base().where({ 'c.id': id, 'c.team_id': teamId }).first([...summaryColumns, 'c.codewords'])) as CodebookRow | undefined;
      return row ? { ...toRecord(row), codewords: bytesToCodewords(row.codewords!) } : null;
    },
    /** For job handlers, which act on an id they were given. */
    async findById(id: number): Promise<CodebookWithCodewords | null> {
      const row = (await base().where({ 'c.id': id }).first([...summaryColumns, 'c.codewords'])) as CodebookRow | undefined;
      return row ? { ...toRecord(row), codewords: bytesToCodewords(row.codewords!) } : null;
    },
    async listForTeam(teamId: number, limit = 1000): Promise<CodebookRecord[]> {
      const rows = (await base().where({ 'c.team_id': teamId }).orderBy('c.id', 'desc').limit(limit).select(summaryColumns)) as CodebookRow[];
      return rows.map(toRecord);
    },
    /** A run's codebooks, smallest first. */
    async listForRun(runId: number): Promise<CodebookRecord[]> {
      const rows = (await base().where({ 'c.run_id': runId }).orderBy('c.size').select(summaryColumns)) as CodebookRow[];
      return rows.map(toRecord);
    },
    /** Codewords included, for evaluating every codebook of a run. */
    async listForRunWithCodewords(runId: number): Promise<CodebookWithCodewords[]> {
      const rows = (await base().where({ 'c.run_id': runId }).orderBy('c.size').select([...summaryColumns, 'c.codewords'])) as CodebookRow[];
      return rows.map((row) => ({ ...toRecord(row), codewords: bytesToCodewords(row.codewords!) }));
    },
  };
}

export type CodebooksRepository = ReturnType<typeof codebooksRepository>;
