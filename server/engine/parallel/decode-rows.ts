import { decodeBlockRows, type BlockDecodePlan } from '../core/decode-blocks';
import { abortError } from '../core/errors';
import { threadBudget } from './thread-budget';
import { pool, type KernelWorker } from './worker-pool';
import type { DecodeJob } from './messages';

/** Output bytes per claimed band: about a millisecond of copying, so two threads share a large image evenly. */
const BAND_BYTES = 1 << 19;
/** Below this many output bytes one thread decodes alone: the hand-off to a worker costs more than it saves. */
export const MIN_PARALLEL_DECODE_BYTES = 1 << 22;
/** Slots of the shared control block: next band, cancel flag, bands finished (as in encode-search.ts). */
const NEXT = 0;
const CANCEL = 1;
const DONE = 2;

let nextJobId = 1 << 29;

/** The array itself when it already lives in shared memory, otherwise a shared copy (workers read it without a copy). */
function sharedCopy<T extends Uint8Array | Uint32Array | Float32Array | Float64Array>(a: T, make: (b: SharedArrayBuffer) => T): T {
  if (a.buffer instanceof SharedArrayBuffer) return a;
  const out = make(new SharedArrayBuffer(a.byteLength));
  out.set(a as never);
  return out;
}

/** The plan's arrays as shared buffers with their offsets, for a worker. */
function jobOf(plan: BlockDecodePlan, out: Uint8Array, control: Int32Array, bandRows: number): Omit<DecodeJob, 'jobId'> {
  const view = (a: Uint8Array | Uint32Array | Float32Array | Float64Array) => ({ buffer: a.buffer as SharedArrayBuffer, byteOffset: a.byteOffset, length: a.length });
  const table = plan.table && sharedCopy(plan.table, (b) => new Uint8Array(b));
  const meanCodes = plan.meanCodes && sharedCopy(plan.meanCodes, (b) => new Uint8Array(b));
  const levels = plan.levels && sharedCopy(plan.levels, (b) => new Float64Array(b));
  return {
    kind: 'decode',
    width: plan.width, height: plan.height, channels: plan.channels, patchWidth: plan.patchWidth, patchHeight: plan.patchHeight,
    blocksX: plan.blocksX, blocksY: plan.blocksY, d: plan.d, per: plan.per,
    table: table && view(table),
    // A table-lookup decode never reads the codewords, so they are not copied for it.
    codewords: plan.table ? null : view(sharedCopy(plan.codewords, (b) => new Float32Array(b))),
    indices: view(sharedCopy(plan.indices, (b) => new Uint32Array(b))),
    meanCodes: meanCodes && view(meanCodes),
    levels: levels && view(levels),
    out: view(out), control: control.buffer as SharedArrayBuffer, bandRows,
  };
}

/** A worker's plan rebuilt from a decode job (the same arrays, viewed on the shared buffers). */
export function planOfJob(job: DecodeJob): BlockDecodePlan {
  return {
    width: job.width, height: job.height, channels: job.channels, patchWidth: job.patchWidth, patchHeight: job.patchHeight,
    blocksX: job.blocksX, blocksY: job.blocksY, d: job.d, per: job.per,
    table: job.table && new Uint8Array(job.table.buffer, job.table.byteOffset, job.table.length),
    codewords: job.codewords ? new Float32Array(job.codewords.buffer, job.codewords.byteOffset, job.codewords.length) : new Float32Array(0),
    indices: new Uint32Array(job.indices.buffer, job.indices.byteOffset, job.indices.length),
    meanCodes: job.meanCodes && new Uint8Array(job.meanCodes.buffer, job.meanCodes.byteOffset, job.meanCodes.length),
    levels: job.levels && new Float64Array(job.levels.buffer, job.levels.byteOffset, job.levels.length),
  };
}

/** Claims bands of block rows through `control` until none is left or the job is cancelled; counts each band finished. */
export function decodeBands(plan: BlockDecodePlan, out: Uint8Array, control: Int32Array, bandRows: number): void {
  const bands = Math.ceil(plan.blocksY / bandRows);
  for (;;) {
    if (Atomics.load(control, CANCEL) !== 0) break;
    const band = Atomics.add(control, NEXT, 1);
    if (band >= bands) break;
    const by0 = band * bandRows;
    decodeBlockRows(plan, by0, Math.min(plan.blocksY, by0 + bandRows), out);
    Atomics.add(control, DONE, 1);
  }
}

export interface DecodeThreadsOptions {
  /** Threads at most, this one included (default: the thread budget's total). */
  threads?: number;
  signal?: AbortSignal;
  /**
   * This thread claims bands too (the default: it would only wait otherwise). False leaves every band to the
   * workers, so that the event loop stays free meanwhile.
   */
  callerThread?: boolean;
}

/**
 * Decodes every block row of `plan` into a new image (height × width × channels, 8-bit). A large image is written in
 * bands of block rows claimed with an atomic counter by this thread and the budget's other threads, into one shared
 * output; the pixels are those of decodeBlockRows over the whole image, whoever writes each band. This thread claims
 * bands too (unless `callerThread` is false) and never waits for a worker that has not started yet; it waits only
 * for bands a worker has claimed.
 */
export async function decodePlanOnThreads(plan: BlockDecodePlan, options: DecodeThreadsOptions = {}): Promise<Uint8Array> {
  const bytes = plan.width * plan.height * plan.channels;
  if (options.signal?.aborted) throw abortError(options.signal);
  const bandRows = Math.max(1, Math.floor(BAND_BYTES / (plan.width * plan.channels * plan.patchHeight)));
  const bands = Math.ceil(plan.blocksY / bandRows);
  const wanted = Math.min(options.threads ?? threadBudget.total, threadBudget.total);
  // Decoding takes only threads that are free: it never queues behind a training job for a second thread.
  if (bytes < MIN_PARALLEL_DECODE_BYTES || bands < 2 || wanted < 2 || threadBudget.available === 0) {
    const out = new Uint8Array(bytes);
    decodeBlockRows(plan, 0, plan.blocksY, out);
    return out;
  }
  const callerHelps = options.callerThread !== false;
  const lease = await threadBudget.acquire(wanted, options.signal);
  const workers: KernelWorker[] = pool.take(Math.max(callerHelps ? 0 : 1, Math.min(lease.threads - (callerHelps ? 1 : 0), bands - (callerHelps ? 1 : 0))));
  const out = new Uint8Array(workers.length > 0 ? new SharedArrayBuffer(bytes) : new ArrayBuffer(bytes));
  const control = new Int32Array(new SharedArrayBuffer(12));
  const onAbort = () => Atomics.store(control, CANCEL, 1);
  options.signal?.addEventListener('abort', onAbort, { once: true });
  const job = workers.length > 0 ? jobOf(plan, out, control, bandRows) : null;
  // Every worker's reply is awaited before its thread goes back to the budget, even when this thread no longer needs it.
  const replies = Promise.allSettled(workers.map((w) => w.run({ ...job!, jobId: nextJobId++ })));
  const settled = replies.finally(() => {
    pool.give(workers);
    lease.release();
    options.signal?.removeEventListener('abort', onAbort);
  });
  if (callerHelps) {
    try {
      decodeBands(plan, out, control, bandRows);
    } catch (error) {
      Atomics.store(control, CANCEL, 1);
      throw error;
    }
  }
  if (Atomics.load(control, DONE) < bands && Atomics.load(control, CANCEL) === 0) {
    // Bands a worker claimed are finished by it before it replies.
    const failed = (await replies).find((r) => r.status === 'rejected');
    if (failed) throw (failed as PromiseRejectedResult).reason;
    if (Atomics.load(control, DONE) < bands && Atomics.load(control, CANCEL) === 0) throw new Error('decoding: a worker left bands unfinished');
  }
  void settled;
  if (options.signal?.aborted) throw abortError(options.signal);
  return out;
}
