import { NearestKernel, type Drift, type SearchState } from '../wasm/kernel';
import type { PassSearch, PassStats, ShardSums } from '../core/types';
import { abortError } from '../core/errors';
import { exactDistance } from '../core/exact-distance';
import { accumulateCentroids } from '../core/accumulate-centroids';
import type { SeedState, SeedUpdater } from '../core/init';
import { threadBudget, type ThreadLease } from './thread-budget';
import { pool, type KernelWorker } from './worker-pool';
import type { AssignJob, AssignReply, SeedJob } from './messages';

/** Vectors per claimed chunk: small enough to balance two to dozens of threads. */
const CHUNK = 2048;
/** Below this many multiply-adds per pass the hand-off to workers costs more than it saves. */
const MIN_PARALLEL_WORK = 1 << 22;
/** Largest block-bound table kept between passes (see run). */
const MAX_BOUND_BYTES = 256 * 1024 * 1024;
/**
 * …and never more than this many times the training vectors' own bytes, so that training memory stays a small
 * multiple of the training set (one bound per block of 16 up to K = 64·d; larger codebooks bound groups of several
 * blocks, see boundLayout). Measured by `npm run bench`.
 */
const MAX_BOUND_RATIO = 4;
/**
 * Fewest groups worth keeping bounds for when groups span several blocks: with only a handful, nearly every vector
 * scans most of the codebook anyway. (Ding et al. 2015 use about K/10 groups; this is a floor, not a target.)
 */
const MIN_GROUPS = 8;

let nextJobId = 1;
/** Which of a crew's workers the next seeding steps on (see NearestSearch.seeding). */
let seedingTurn = 0;
/** The last job queued on each worker by inTurn. */
const turns = new WeakMap<KernelWorker, Promise<unknown>>();

/** Runs `job` on `worker` once the jobs queued on it before have settled (a worker runs one job at a time). */
function inTurn<T>(worker: KernelWorker, job: () => Promise<T>): Promise<T> {
  const next = (turns.get(worker) ?? Promise.resolve()).then(job);
  turns.set(worker, next.catch(() => undefined));
  return next;
}

type SeedStep = SeedJob;
/** Seeding steps asked of each worker in the current turn of the event loop, sent together (see seedOnWorker). */
const gathering = new Map<KernelWorker, { steps: SeedStep[]; settle: { resolve(total: number): void; reject(err: unknown): void }[] }>();

/**
 * Runs one shard's seeding step on `worker`, returning its total. The steps the shards of a crew ask in the same turn
 * of the event loop (core/init seedSteps asks them all at once) go to each worker as one message, run in the order
 * asked: one round trip per worker and codeword rather than one per shard.
 */
function seedOnWorker(worker: KernelWorker, step: SeedStep): Promise<number> {
  return new Promise((resolve, reject) => {
    let batch = gathering.get(worker);
    if (!batch) {
      const fresh = { steps: [] as SeedStep[], settle: [] as { resolve(total: number): void; reject(err: unknown): void }[] };
      gathering.set(worker, fresh);
      batch = fresh;
      setImmediate(() => {
        gathering.delete(worker);
        inTurn(worker, () => worker.run({ kind: 'seed-batch', jobId: nextJobId++, steps: fresh.steps })).then(
          (reply) => fresh.settle.forEach((s, i) => s.resolve(reply.totals![i])),
          (err: unknown) => fresh.settle.forEach((s) => s.reject(err)),
        );
      });
    }
    batch.steps.push(step);
    batch.settle.push({ resolve, reject });
  });
}

/**
 * The bound table a search over N vectors of dimension d keeps with K codewords: one float32 per vector and group
 * of 2^groupShift blocks of 16 codewords, with the smallest group size whose table stays within MAX_BOUND_BYTES and
 * MAX_BOUND_RATIO × the vectors. bytes is 0 (every pass runs in full) when even groups that leave MIN_GROUPS of them
 * do not fit. Groups of one block (shift 0) whenever they fit, so K ≤ 64·d keeps per-block bounds.
 */
export function boundLayout(n: number, d: number, k: number): { groupShift: number; bytes: number } {
  const limit = Math.min(MAX_BOUND_BYTES, MAX_BOUND_RATIO * n * d * 4);
  const blocks = Math.ceil(k / 16);
  for (let shift = 0; ; shift++) {
    const groups = Math.ceil(blocks / 2 ** shift);
    if (shift > 0 && groups < MIN_GROUPS) return { groupShift: 0, bytes: 0 };
    if (n * groups * 4 <= limit) return { groupShift: shift, bytes: n * groups * 4 };
  }
}

/** Bytes of the bound table (see boundLayout). */
export function boundTableBytes(n: number, d: number, k: number): number {
  return boundLayout(n, d, k).bytes;
}

/**
 * Orders codewords so that each group of `unit` consecutive positions (16 or a multiple,
 * the bound groups) holds codewords lying close together: recursive halving (at a multiple
 * of unit) along each subset's principal direction, found by power iteration. Compact
 * groups make the bounds tight, so a vector skips the groups far from it. Any order gives
 * the same results; this one depends only on the codebook and unit, so every thread uses
 * the same.
 */
export function blockOrder(codewords: Float32Array, k: number, d: number, unit = 16): Uint32Array {
  const order = Uint32Array.from({ length: k }, (_, j) => j);
  const mean = new Float64Array(d);
  const dir = new Float64Array(d);
  const next = new Float64Array(d);
  const proj = new Float64Array(k);
  const split = (from: number, to: number) => {
    const count = to - from;
    if (count <= unit) return;
    mean.fill(0);
    for (let p = from; p < to; p++) for (let i = 0; i < d; i++) mean[i] += codewords[order[p] * d + i];
    for (let i = 0; i < d; i++) mean[i] /= count;
    for (let i = 0; i < d; i++) dir[i] = 1 + i / d;
    for (let it = 0; it < 8; it++) {
      next.fill(0);
      for (let p = from; p < to; p++) {
        const o = order[p] * d;
        let t = 0;
        for (let i = 0; i < d; i++) t += (codewords[o + i] - mean[i]) * dir[i];
        for (let i = 0; i < d; i++) next[i] += t * (codewords[o + i] - mean[i]);
      }
      let norm = 0;
      for (let i = 0; i < d; i++) norm += next[i] * next[i];
      if (!(norm > 0)) break;
      norm = Math.sqrt(norm);
      for (let i = 0; i < d; i++) dir[i] = next[i] / norm;
    }
    for (let p = from; p < to; p++) {
      const o = order[p] * d;
      let t = 0;
      for (let i = 0; i < d; i++) t += codewords[o + i] * dir[i];
      proj[order[p]] = t;
    }
    const part = Array.from(order.subarray(from, to)).sort((a, b) => proj[a] - proj[b] || a - b);
    order.set(part, from);
    const half = from + Math.ceil(count / (2 * unit)) * unit;
    split(from, half);
    split(half, to);
  };
  split(0, k);
  return order;
}

let localKernel: NearestKernel | undefined;
function sharedLocalKernel(): NearestKernel {
  localKernel ??= new NearestKernel();
  return localKernel;
}

/**
 * The vectors in shared memory, as the workers read them: the same array when it already is, else one copy.
 * A caller that trains several times on one set converts it once, so no pass makes a copy of its own.
 */
export function sharedVectors(vectors: Float32Array): Float32Array {
  if (vectors.buffer instanceof SharedArrayBuffer) return vectors;
  const out = new Float32Array(new SharedArrayBuffer(vectors.byteLength));
  out.set(vectors);
  return out;
}

function toShared(vectors: Float32Array): { buffer: SharedArrayBuffer; byteOffset: number } {
  const shared = sharedVectors(vectors);
  return { buffer: shared.buffer as SharedArrayBuffer, byteOffset: shared.byteOffset };
}

/**
 * Threads and their kernel workers held for a series of searches that run one at a time (the shards of a training
 * set): one lease, one set of workers, shared by every search opened with it.
 */
export class SearchCrew {
  private closed = false;

  private readonly workers: KernelWorker[] = [];

  private constructor(private readonly lease: ThreadLease) {}

  get threads(): number {
    return this.lease.threads;
  }

  static async open(threads?: number, signal?: AbortSignal): Promise<SearchCrew> {
    const lease = await threadBudget.acquire(threads ?? threadBudget.total, signal);
    return new SearchCrew(lease);
  }

  /** `want` (≤ threads) kernel workers, taken from the pool the first time they are needed. */
  take(want: number): KernelWorker[] {
    if (this.workers.length < want) this.workers.push(...pool.take(want - this.workers.length));
    return this.workers.slice(0, want);
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    pool.give(this.workers);
    this.lease.release();
  }
}

/** Outcome of one pass. */
export type { PassStats };

/**
 * Repeated nearest-codeword passes over one vector set (N × d), on the threads of one
 * lease. The vectors are shared with the workers once; each pass shares only the codebook.
 * Between passes with the same codebook size the search keeps per-vector bounds for each
 * block of 16 codewords, so a vector scans only the blocks that could hold a codeword
 * nearer than its current one; results are identical to a full search either way.
 * indices/distances hold the latest pass and may be modified by the caller (the search
 * keeps its own copy of its state).
 */
export class NearestSearch implements PassSearch {
  readonly indices: Uint32Array;
  readonly distances: Float64Array;
  private readonly state: SearchState;
  private previous?: Float32Array;
  /** Block layout order of the codewords, fixed while the bounds are kept. */
  private order?: Uint32Array;
  /** Blocks of 16 per bound group, as a power of two (boundLayout), fixed with the order. */
  private groupShift = 0;
  private closed = false;

  private constructor(
    private readonly vectors: Float32Array,
    private readonly shared: { buffer: SharedArrayBuffer; byteOffset: number } | undefined,
    readonly n: number,
    readonly d: number,
    private readonly lease: ThreadLease,
    private readonly workers: KernelWorker[],
    private readonly ownsWorkers: boolean,
    private readonly buffers: {
      indices: SharedArrayBuffer; distances: SharedArrayBuffer; blockLower: SharedArrayBuffer;
    },
  ) {
    // Shared so that the centroid update can run on the workers too.
    this.indices = new Uint32Array(new SharedArrayBuffer(n * 4));
    this.distances = new Float64Array(n);
    this.state = {
      indices: new Uint32Array(buffers.indices),
      distances: new Float64Array(buffers.distances),
      blockLower: new Float32Array(buffers.blockLower),
    };
  }

  /** Worker threads serving this search (0: the calling thread does the work). */
  get threads(): number {
    return this.workers.length;
  }

  static async open(
    vectors: Float32Array, d: number,
    options: { threads?: number; signal?: AbortSignal; maxK?: number; crew?: SearchCrew } = {},
  ): Promise<NearestSearch> {
    const n = vectors.length / d;
    const { crew } = options;
    // A crew's threads serve several searches used one at a time (the shards of one training set) and stay the
    // crew's; otherwise the search takes its own lease and threads.
    const lease = crew
      ? { threads: crew.threads, release: () => undefined }
      : await threadBudget.acquire(options.threads ?? threadBudget.total, options.signal);
    const work = n * d * (options.maxK ?? Infinity);
    // Large passes always go to workers, even on a one-thread lease, so that the calling
    // thread (the server's event loop, say) stays responsive.
    const useWorkers = work >= MIN_PARALLEL_WORK && n > CHUNK;
    const want = Math.min(lease.threads, Math.ceil(n / CHUNK));
    const workers = !useWorkers ? [] : crew ? crew.take(want) : pool.take(want);
    const shared = useWorkers ? toShared(vectors) : undefined;
    return new NearestSearch(vectors, shared, n, d, lease, workers, !crew, {
      indices: new SharedArrayBuffer(n * 4),
      distances: new SharedArrayBuffer(n * 8),
      blockLower: new SharedArrayBuffer(0),
    });
  }

  /** One pass with codewords K × d. */
  async run(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<PassStats> {
    if (this.closed) throw new Error('NearestSearch is closed');
    if (signal?.aborted) throw abortError(signal);
    const cw = codewords.subarray(0, k * this.d);
    // Full and bounded passes give the same result; a bounded pass needs the bounds of a
    // completed pass with a codebook of the same size.
    const sameSize = this.previous !== undefined && this.previous.length === cw.length;
    // Bounds take N × (groups) float32, the groups as small as MAX_BOUND_BYTES and MAX_BOUND_RATIO × the vectors
    // allow (boundLayout); when none fit every pass runs in full.
    const layout = boundLayout(this.n, this.d, k);
    if (!sameSize || !this.order) {
      this.groupShift = layout.groupShift;
      const order = blockOrder(cw, k, this.d, 16 << this.groupShift);
      this.order = new Uint32Array(new SharedArrayBuffer(k * 4));
      this.order.set(order);
    }
    const boundEntries = layout.bytes / 4;
    const drift = sameSize && boundEntries > 0 ? this.driftFrom(this.previous!, cw, k) : undefined;
    // Until the pass completes the bounds are stale: a failed pass must not be trusted.
    this.previous = undefined;
    if (this.state.blockLower.length !== boundEntries) {
      this.buffers.blockLower = new SharedArrayBuffer(boundEntries * 4);
      this.state.blockLower = new Float32Array(this.buffers.blockLower);
    }
    const stats = this.workers.length === 0 || this.n * this.d * k < MIN_PARALLEL_WORK
      ? this.runLocal(cw, k, drift)
      : await this.runWorkers(cw, k, drift, signal);
    this.previous = cw.slice();
    this.indices.set(this.state.indices);
    this.distances.set(this.state.distances);
    return stats;
  }

  private driftFrom(previous: Float32Array, next: Float32Array, k: number): Drift {
    const d = this.d;
    const position = new Uint32Array(k);
    for (let p = 0; p < k; p++) position[this.order![p]] = p;
    const blockMoved = new Float64Array(new SharedArrayBuffer(Math.ceil(k / (16 << this.groupShift)) * 8));
    for (let j = 0; j < k; j++) {
      // Rounded up so that the bound test stays conservative.
      const m = Math.sqrt(exactDistance(previous, j * d, next, j * d, d)) * (1 + 1e-12);
      const b = position[j] >> (4 + this.groupShift);
      if (m > blockMoved[b]) blockMoved[b] = m;
    }
    return { blockMoved };
  }

  private runLocal(codewords: Float32Array, k: number, drift: Drift | undefined): PassStats {
    const kernel = sharedLocalKernel();
    kernel.setCodebook(codewords, k, this.d, this.order, this.groupShift);
    if (drift) return kernel.assignBounded(this.vectors, 0, this.n, this.state, drift);
    const redecided = kernel.assignRange(
      this.vectors, 0, this.n, this.state.indices, this.state.distances, undefined,
      this.state.blockLower.length > 0 ? this.state.blockLower : undefined,
    );
    return { redecided, searched: this.n };
  }

  private async runWorkers(
    codewords: Float32Array, k: number, drift: Drift | undefined, signal?: AbortSignal,
  ): Promise<PassStats> {
    const cw = new SharedArrayBuffer(k * this.d * 4);
    new Float32Array(cw).set(codewords);
    const control = new SharedArrayBuffer(8);
    const flags = new Int32Array(control);
    const onAbort = () => Atomics.store(flags, 1, 1);
    signal?.addEventListener('abort', onAbort, { once: true });
    try {
      const job: Omit<AssignJob, 'jobId'> = {
        vectors: this.shared!.buffer,
        vectorsByteOffset: this.shared!.byteOffset,
        n: this.n,
        d: this.d,
        codewords: cw,
        k,
        order: this.order!.buffer as SharedArrayBuffer,
        groupShift: this.groupShift,
        indices: this.buffers.indices,
        distances: this.buffers.distances,
        blockLower: this.buffers.blockLower,
        control,
        chunkSize: CHUNK,
        drift: drift && { blockMoved: drift.blockMoved.buffer as SharedArrayBuffer },
      };
      // Every worker is awaited, even after a failure, so none is left running a stale job.
      const replies = await Promise.allSettled(this.workers.map((w) => w.run({ ...job, jobId: nextJobId++ })));
      const failed = replies.find((r) => r.status === 'rejected');
      if (failed) throw (failed as PromiseRejectedResult).reason;
      if (signal?.aborted) throw abortError(signal);
      const values = replies.map((r) => (r as PromiseFulfilledResult<AssignReply>).value);
      return {
        redecided: values.reduce((s, r) => s + r.redecided, 0),
        searched: values.reduce((s, r) => s + r.searched, 0),
      };
    } finally {
      signal?.removeEventListener('abort', onAbort);
    }
  }

  /**
   * Float64 centroid sums of the partition in `indices` (the caller's, possibly repaired), each cell's from zero in
   * vector order, and the counts. Cells are split among the workers by vector count; each cell's sum is formed by
   * one worker in vector order, so the result is bit-identical to accumulateCentroids on one thread.
   */
  async partialSums(k: number, signal?: AbortSignal): Promise<ShardSums> {
    const { n, d } = this;
    const indices = this.indices;
    if (this.workers.length === 0 || (this.workers.length === 1 && n * d < MIN_PARALLEL_WORK / 8)) {
      const sums = new Float64Array(k * d);
      const counts = accumulateCentroids(this.vectors, d, indices, new Float32Array(k * d), k, sums);
      return { counts, sums };
    }
    const counts = new Uint32Array(k);
    for (let v = 0; v < n; v++) counts[indices[v]]++;
    const sumsBuffer = new SharedArrayBuffer(k * d * 8);
    const parts = this.workers.length;
    const ranges: Array<[number, number]> = [];
    let start = 0;
    let acc = 0;
    for (let j = 0; j < k && ranges.length < parts - 1; j++) {
      acc += counts[j];
      if (acc >= ((ranges.length + 1) * n) / parts) {
        ranges.push([start, j + 1]);
        start = j + 1;
      }
    }
    ranges.push([start, k]);
    const replies = await Promise.allSettled(
      ranges.map(([cellStart, cellEnd], w) =>
        this.workers[w].run({
          jobId: nextJobId++, kind: 'accumulate',
          vectors: this.shared!.buffer, vectorsByteOffset: this.shared!.byteOffset, n, d,
          indices: indices.buffer as SharedArrayBuffer, sums: sumsBuffer, cellStart, cellEnd,
        }),
      ),
    );
    const failed = replies.find((r) => r.status === 'rejected');
    if (failed) throw (failed as PromiseRejectedResult).reason;
    if (signal?.aborted) throw abortError(signal);
    return { counts, sums: new Float64Array(sumsBuffer) };
  }

  /** Centroid update for the partition in `indices`: codewords K × d updated in place for every non-empty cell; returns the counts. */
  async accumulate(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<Uint32Array> {
    const d = this.d;
    const { counts, sums } = await this.partialSums(k, signal);
    for (let j = 0; j < k; j++) {
      const c = counts[j];
      if (c === 0) continue;
      for (let i = 0; i < d; i++) codewords[j * d + i] = sums[j * d + i] / c;
    }
    return counts;
  }

  /**
   * k-means++ seeding state for K codewords in memory shared with the workers, and the step that updates it
   * (core/init seedUpdateWithTotal over the whole set, its D² total returned), or undefined when there are no
   * workers or the set is too small to be worth the hand-off: the seeding then runs on the calling thread. A step runs on one worker, so the searches of a crew (the
   * shards of a training set) step side by side on its threads: each search's steps go to one worker, the searches
   * opened one after another to its workers in turn, and the steps asked of one worker at once go as one message. Every
   * vector depends only on itself and the total is summed in vector order, so the result is the same either way.
   */
  seeding(k: number): { state: SeedState; update: SeedUpdater } | undefined {
    const { n, d } = this;
    // A step reads every vector once: below about a million components its pass is shorter than a round trip to a
    // worker (measured with the bench's 4×4 patches: 16,667-vector shards seed faster on the calling thread).
    if (this.workers.length === 0 || n * d < MIN_PARALLEL_WORK / 4 || n <= CHUNK) return undefined;
    const buffers = {
      codewords: new SharedArrayBuffer(k * d * 4),
      minDist: new SharedArrayBuffer(n * 8),
      nearest: new SharedArrayBuffer(n * 4),
      fromNewest: new SharedArrayBuffer(k * 8),
      norms: new SharedArrayBuffer(n * 8),
    };
    const state: SeedState = {
      codewords: new Float32Array(buffers.codewords),
      minDist: new Float64Array(buffers.minDist),
      nearest: new Uint32Array(buffers.nearest),
      fromNewest: new Float64Array(buffers.fromNewest),
    };
    const worker = this.workers[seedingTurn++ % this.workers.length];
    const update = async (c: number): Promise<number> => {
      if (this.closed) throw new Error('NearestSearch is closed');
      // Cancellation is checked between steps (core/init seedSteps): a step is one shard's pass over its vectors.
      return seedOnWorker(worker, { vectors: this.shared!.buffer, vectorsByteOffset: this.shared!.byteOffset, n, d, k, c, ...buffers });
    };
    return { state, update };
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    if (this.ownsWorkers) pool.give(this.workers);
    this.lease.release();
  }
}
