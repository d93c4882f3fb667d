import { EncodeKernel, type BlockShape } from '../wasm/encode-kernel';
import { abortError } from '../core/errors';
import { threadBudget } from './thread-budget';
import { pool, type KernelWorker } from './worker-pool';
import type { EncodeJob } from './messages';

/** Vectors per claimed chunk: a few milliseconds of work, small enough to balance two to dozens of threads. */
const ENCODE_CHUNK = 4096;
/** Below this many vector × codeword × component products the hand-off to workers costs more than it saves. */
const MIN_PARALLEL_WORK = 1 << 24;
/** Slots of the shared control block: next chunk, cancel flag, chunks finished. */
const NEXT = 0;
const CANCEL = 1;
const DONE = 2;

let nextJobId = 1 << 30;

let localKernel: EncodeKernel | undefined;
let localKey: { codewords: Float32Array; shape: string } | undefined;

/**
 * This thread's encoding kernel with the codebook loaded; loaded again unless the codewords (compared by value, so a
 * codebook changed in place is never searched stale) and the shape are those of the last call.
 */
function kernelFor(codewords: Float32Array, k: number, shape: BlockShape): EncodeKernel {
  localKernel ??= new EncodeKernel();
  const key = `${shape.width}×${shape.height}×${shape.channels}`;
  const d = shape.width * shape.height * shape.channels;
  const current = codewords.subarray(0, k * d);
  const same = localKey !== undefined && localKey.shape === key && localKey.codewords.length === current.length
    && localKey.codewords.every((v, i) => Object.is(v, current[i]));
  if (!same) {
    localKernel.setCodebook(current, k, shape);
    localKey = { codewords: current.slice(), shape: key };
  }
  return localKernel;
}

export interface EncodeSearchOptions {
  threads?: number;
  signal?: AbortSignal;
  /**
   * The calling thread claims chunks too, alongside the workers, and does not wait for a worker that has not started
   * yet. For a command-line process, whose thread has nothing else to do and whose workers start cold; a server
   * keeps the default (workers only), so its event loop stays free.
   */
  callerThread?: boolean;
}

/** Vectors in shared memory (the same array when they already are), as the workers read them. */
function shared(vectors: Float32Array): Float32Array {
  if (vectors.buffer instanceof SharedArrayBuffer) return vectors;
  const out = new Float32Array(new SharedArrayBuffer(vectors.byteLength));
  out.set(vectors);
  return out;
}

/**
 * Nearest codeword of every block vector for encoding (N × d, d = width·height·channels, row-major): the index of
 * the smallest exact float64 squared distance, ties to the lowest index, and that distance — the results of a
 * brute-force search, found with exact rejection (wasm/encode-kernel.ts). Chunks of vectors are claimed with an
 * atomic counter by the budget's threads; each vector's answer depends only on itself and the codebook, so the
 * output is the same whichever thread computes it.
 */
export async function encodeNearest(
  vectors: Float32Array, shape: BlockShape, codewords: Float32Array, k: number, options: EncodeSearchOptions = {},
): Promise<{ indices: Uint32Array; distances: Float64Array }> {
  const d = shape.width * shape.height * shape.channels;
  const n = vectors.length / d;
  if (options.signal?.aborted) throw abortError(options.signal);
  if (n * k * d < MIN_PARALLEL_WORK || n <= ENCODE_CHUNK) {
    const indices = new Uint32Array(n);
    const distances = new Float64Array(n);
    kernelFor(codewords, k, shape).encodeRange(vectors, 0, n, indices, distances);
    return { indices, distances };
  }
  const lease = await threadBudget.acquire(options.threads ?? threadBudget.total, options.signal);
  const chunks = Math.ceil(n / ENCODE_CHUNK);
  const callerHelps = options.callerThread === true;
  const workers: KernelWorker[] = pool.take(Math.max(0, Math.min(lease.threads - (callerHelps ? 1 : 0), chunks)));
  const sharedVectors = workers.length > 0 ? shared(vectors) : vectors;
  const indices = new Uint32Array(new SharedArrayBuffer(n * 4));
  const distances = new Float64Array(new SharedArrayBuffer(n * 8));
  const control = new Int32Array(new SharedArrayBuffer(12));
  const onAbort = () => Atomics.store(control, CANCEL, 1);
  options.signal?.addEventListener('abort', onAbort, { once: true });
  const cw = new Float32Array(new SharedArrayBuffer(k * d * 4));
  cw.set(codewords.subarray(0, k * d));
  const job: Omit<EncodeJob, 'jobId'> = {
    kind: 'encode', vectors: sharedVectors.buffer as SharedArrayBuffer, vectorsByteOffset: sharedVectors.byteOffset, n, ...shape,
    codewords: cw.buffer as SharedArrayBuffer, k, indices: indices.buffer as SharedArrayBuffer,
    distances: distances.buffer as SharedArrayBuffer, control: control.buffer as SharedArrayBuffer, chunkSize: ENCODE_CHUNK,
  };
  // Every worker's reply is awaited before its thread goes back to the budget, even when the caller no longer needs it.
  const replies = Promise.allSettled(workers.map((w) => w.run({ ...job, jobId: nextJobId++ })));
  const settled = replies.finally(() => {
    pool.give(workers);
    lease.release();
    options.signal?.removeEventListener('abort', onAbort);
  });
  if (!callerHelps) {
    const results = await settled;
    const failed = results.find((r) => r.status === 'rejected');
    if (failed) throw (failed as PromiseRejectedResult).reason;
  } else {
    const kernel = kernelFor(codewords, k, shape);
    for (;;) {
      if (Atomics.load(control, CANCEL) !== 0) break;
      const chunk = Atomics.add(control, NEXT, 1);
      if (chunk >= chunks) break;
      const start = chunk * ENCODE_CHUNK;
      kernel.encodeRange(vectors, start, Math.min(n, start + ENCODE_CHUNK), indices, distances);
      Atomics.add(control, DONE, 1);
    }
    // Chunks a worker claimed are finished by it; a worker that never started claims none, and is not waited for.
    let allReplied = false;
    void replies.then(() => (allReplied = true));
    while (Atomics.load(control, DONE) < chunks && Atomics.load(control, CANCEL) === 0) {
      if (allReplied) {
        const failed = (await replies).find((r) => r.status === 'rejected');
        throw failed ? (failed as PromiseRejectedResult).reason : new Error('encoding search: a worker left chunks unfinished');
      }
      await Promise.race([new Promise((resolve) => setTimeout(resolve, 1)), replies]);
    }
    void settled;
  }
  if (options.signal?.aborted) throw abortError(options.signal);
  return { indices, distances };
}
