/** One pass of nearest search handed to a worker; every buffer is shared, nothing is copied. */
export interface AssignJob {
  jobId: number;
  vectors: SharedArrayBuffer; // N × d f32 starting at vectorsByteOffset
  vectorsByteOffset: number;
  n: number;
  d: number;
  codewords: SharedArrayBuffer; // K × d f32, row-major
  k: number;
  order: SharedArrayBuffer; // K u32: the codeword at each position of the block layout
  groupShift: number; // bound groups of 2^groupShift blocks of 16 positions
  indices: SharedArrayBuffer; // N u32, written (read too in a bounded pass)
  distances: SharedArrayBuffer; // N f64, written
  blockLower: SharedArrayBuffer; // N × ⌈K/(16·2^groupShift)⌉ f32, group bounds, written (read too in a bounded pass)
  control: SharedArrayBuffer; // Int32 [next chunk, cancel flag]
  chunkSize: number;
  /** Present for a bounded pass: one f64 per bound group, the largest codeword move within it. */
  drift?: { blockMoved: SharedArrayBuffer };
}

/** Centroid sums of the cells [cellStart, cellEnd): each worker owns whole cells. */
export interface AccumulateJob {
  jobId: number;
  kind: 'accumulate';
  vectors: SharedArrayBuffer; // N × d f32 starting at vectorsByteOffset
  vectorsByteOffset: number;
  n: number;
  d: number;
  indices: SharedArrayBuffer; // N u32, read
  sums: SharedArrayBuffer; // K × d f64, rows of the owned cells written
  cellStart: number;
  cellEnd: number;
}

/** One k-means++ step (core/init seedUpdateWithTotal) over all of one shard's vectors, by one worker (in a SeedBatchJob). */
export interface SeedJob {
  vectors: SharedArrayBuffer; // N × d f32 starting at vectorsByteOffset
  vectorsByteOffset: number;
  n: number;
  d: number;
  k: number;
  /** The newest codeword's index; at 0 the worker also fills `norms`. */
  c: number;
  codewords: SharedArrayBuffer; // K × d f32, read
  minDist: SharedArrayBuffer; // N f64, read and written
  nearest: SharedArrayBuffer; // N u32, read and written
  fromNewest: SharedArrayBuffer; // K f64, read
  norms: SharedArrayBuffer; // N f64: ‖x‖ of each vector, written at step 0, read after
}

/** The k-means++ steps of several shards for one worker, run in order; the reply carries their totals in that order. */
export interface SeedBatchJob {
  jobId: number;
  kind: 'seed-batch';
  steps: SeedJob[];
}

export type WorkerJob = (AssignJob & { kind?: 'assign' }) | AccumulateJob | SeedBatchJob | EncodeJob | DecodeJob;

export interface AssignReply {
  jobId: number;
  redecided: number;
  searched: number;
  /** A seed batch's D² totals (float64, each summed in vector order), one per step. */
  totals?: number[];
  error?: string;
}

/** Encoding search (parallel/encode-search.ts) over chunks claimed through `control`. */
export interface EncodeJob {
  jobId: number;
  kind: 'encode';
  vectors: SharedArrayBuffer; // N × d f32 starting at vectorsByteOffset, d = width·height·channels
  vectorsByteOffset: number;
  n: number;
  width: number;
  height: number;
  channels: number;
  codewords: SharedArrayBuffer; // K × d f32, row-major
  k: number;
  indices: SharedArrayBuffer; // N u32, written
  distances: SharedArrayBuffer; // N f64, written
  control: SharedArrayBuffer; // Int32 [next chunk, cancel flag, chunks finished]
  chunkSize: number;
}

/** A shared array as a worker sees it: its buffer, where it starts, and how many elements it holds. */
export interface SharedView {
  buffer: SharedArrayBuffer;
  byteOffset: number;
  length: number;
}

/** Decoding (parallel/decode-rows.ts): bands of block rows claimed through `control`, written into one shared image. */
export interface DecodeJob {
  jobId: number;
  kind: 'decode';
  width: number;
  height: number;
  channels: number;
  patchWidth: number;
  patchHeight: number;
  blocksX: number;
  blocksY: number;
  d: number;
  per: number;
  table: SharedView | null; // K × d u8, or null when the blocks are computed
  codewords: SharedView | null; // K × d f32, or null with a table
  indices: SharedView; // blocks × per u32
  meanCodes: SharedView | null; // blocks u8
  levels: SharedView | null; // 2^meanBits f64
  out: SharedView; // height × width × channels u8, written
  control: SharedArrayBuffer; // Int32 [next band, cancel flag, bands finished]
  bandRows: number;
}
