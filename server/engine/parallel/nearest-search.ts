import { NearestKernel, type Drift, type SearchState } from '../wasm/kernel';
import { abortError } from '../core/errors';
import { exactDistance } from '../core/exact-distance';
import { accumulateCentroids } from '../core/accumulate-centroids';
import { threadBudget, type ThreadLease } from './thread-budget';
import { pool, type KernelWorker } from './worker-pool';
import type { AssignJob, AssignReply } from './messages';

/** Vectors per claimed chunk: small enough to balance two to dozens of threads. */
const CHUNK = 2048;
/** Below this many multiply-adds per pass the hand-off to workers costs more than it saves. */
const MIN_PARALLEL_WORK = 1 << 22;

let nextJobId = 1;

let localKernel: NearestKernel | undefined;
function sharedLocalKernel(): NearestKernel {
  localKernel ??= new NearestKernel();
  return localKernel;
}

function toShared(vectors: Float32Array): { buffer: SharedArrayBuffer; byteOffset: number } {
  if (vectors.buffer instanceof SharedArrayBuffer) {
    return { buffer: vectors.buffer, byteOffset: vectors.byteOffset };
  }
  const buffer = new SharedArrayBuffer(vectors.byteLength);
  new Float32Array(buffer).set(vectors);
  return { buffer, byteOffset: 0 };
}

/** Outcome of one pass. */
export interface PassStats {
  /** Vectors whose near-tie was re-decided by the exact float64 search. */
  redecided: number;
  /** Vectors that needed a search (the rest kept their codeword by the bound test). */
  searched: number;
}

/**
 * Repeated nearest-codeword passes over one vector set (N × d), on the threads of one
 * lease. The vectors are shared with the workers once; each pass shares only the codebook.
 * Between passes with the same codebook size the search keeps per-vector bounds, so
 * vectors whose codeword provably stays the same skip the search; results are identical
 * to a full search either way. indices/distances hold the latest pass and may be
 * modified by the caller (the search keeps its own copy of its state).
 */
export class NearestSearch {
  readonly indices: Uint32Array;
  readonly distances: Float64Array;
  private readonly state: SearchState;
  private previous?: Float32Array;
  /** Passes to run in full before trying the bound test again (it costs d per vector). */
  private fullPasses = 0;
  private backoff = 1;
  private closed = false;

  private constructor(
    private readonly vectors: Float32Array,
    private readonly shared: { buffer: SharedArrayBuffer; byteOffset: number } | undefined,
    readonly n: number,
    readonly d: number,
    private readonly lease: ThreadLease,
    private readonly workers: KernelWorker[],
    private readonly buffers: { indices: SharedArrayBuffer; distances: SharedArrayBuffer; lower: SharedArrayBuffer },
  ) {
    // Shared so that the centroid update can run on the workers too.
    this.indices = new Uint32Array(new SharedArrayBuffer(n * 4));
    this.distances = new Float64Array(n);
    this.state = {
      indices: new Uint32Array(buffers.indices),
      distances: new Float64Array(buffers.distances),
      lower: new Float64Array(buffers.lower),
    };
  }

  /** Worker threads serving this search (0: the calling thread does the work). */
  get threads(): number {
    return this.workers.length;
  }

  static async open(
    vectors: Float32Array, d: number, options: { threads?: number; signal?: AbortSignal; maxK?: number } = {},
  ): Promise<NearestSearch> {
    const n = vectors.length / d;
    const lease = await threadBudget.acquire(options.threads ?? threadBudget.total, options.signal);
    const work = n * d * (options.maxK ?? Infinity);
    // Large passes always go to workers, even on a one-thread lease, so that the calling
    // thread (the server's event loop, say) stays responsive.
    const useWorkers = work >= MIN_PARALLEL_WORK && n > CHUNK;
    const workers = useWorkers ? pool.take(Math.min(lease.threads, Math.ceil(n / CHUNK))) : [];
    const shared = useWorkers ? toShared(vectors) : undefined;
    return new NearestSearch(vectors, shared, n, d, lease, workers, {
      indices: new SharedArrayBuffer(n * 4),
      distances: new SharedArrayBuffer(n * 8),
      lower: new SharedArrayBuffer(n * 8),
    });
  }

  /** One pass with codewords K × d. */
  async run(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<PassStats> {
    if (this.closed) throw new Error('NearestSearch is closed');
    if (signal?.aborted) throw abortError(signal);
    const cw = codewords.subarray(0, k * this.d);
    // Full and bounded passes give the same result, so this only chooses the cheaper one:
    // while the codewords still move a lot the bound test rarely skips anything.
    const sameSize = this.previous !== undefined && this.previous.length === cw.length;
    if (!sameSize) {
      this.fullPasses = 0;
      this.backoff = 1;
    }
    const bounded = sameSize && this.fullPasses === 0;
    if (this.fullPasses > 0) this.fullPasses--;
    const drift = bounded ? this.driftFrom(this.previous!, cw, k) : undefined;
    // Until the pass completes the bounds are stale: a failed pass must not be trusted.
    this.previous = undefined;
    const stats = this.workers.length === 0 || this.n * this.d * k < MIN_PARALLEL_WORK
      ? this.runLocal(cw, k, drift)
      : await this.runWorkers(cw, k, drift, signal);
    if (drift) {
      if (stats.searched > 0.85 * this.n) {
        this.fullPasses = this.backoff;
        this.backoff = Math.min(this.backoff * 2, 8);
      } else {
        this.backoff = 1;
      }
    }
    this.previous = cw.slice();
    this.indices.set(this.state.indices);
    this.distances.set(this.state.distances);
    return stats;
  }

  private driftFrom(previous: Float32Array, next: Float32Array, k: number): Drift {
    const d = this.d;
    const moved = new Float64Array(new SharedArrayBuffer(k * 8));
    let max = 0;
    let argMax = 0;
    let second = 0;
    for (let j = 0; j < k; j++) {
      // Rounded up so that the bound test stays conservative.
      const m = Math.sqrt(exactDistance(previous, j * d, next, j * d, d)) * (1 + 1e-12);
      moved[j] = m;
      if (m > max) {
        second = max;
        max = m;
        argMax = j;
      } else if (m > second) {
        second = m;
      }
    }
    return { moved, max, argMax, second };
  }

  private runLocal(codewords: Float32Array, k: number, drift: Drift | undefined): PassStats {
    const kernel = sharedLocalKernel();
    kernel.setCodebook(codewords, k, this.d);
    if (drift) return kernel.assignBounded(this.vectors, 0, this.n, this.state, drift);
    const redecided = kernel.assignRange(
      this.vectors, 0, this.n, this.state.indices, this.state.distances, this.state.lower,
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
        indices: this.buffers.indices,
        distances: this.buffers.distances,
        lower: this.buffers.lower,
        control,
        chunkSize: CHUNK,
        drift: drift && {
          moved: drift.moved.buffer as SharedArrayBuffer, max: drift.max, argMax: drift.argMax, second: drift.second,
        },
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
   * Centroid update for the partition in `indices` (the caller's, possibly repaired):
   * codewords K × d updated in place for every non-empty cell; returns the counts. Cells
   * are split among the workers by vector count; each cell's sum is formed by one worker in
   * vector order, so the result is bit-identical to accumulateCentroids on one thread.
   */
  async accumulate(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<Uint32Array> {
    const { n, d } = this;
    const indices = this.indices;
    if (this.workers.length === 0 || (this.workers.length === 1 && n * d < MIN_PARALLEL_WORK / 8)) {
      return accumulateCentroids(this.vectors, d, indices, codewords, k);
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
    const sums = new Float64Array(sumsBuffer);
    for (let j = 0; j < k; j++) {
      const c = counts[j];
      if (c === 0) continue;
      for (let i = 0; i < d; i++) codewords[j * d + i] = sums[j * d + i] / c;
    }
    return counts;
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    pool.give(this.workers);
    this.lease.release();
  }
}
