// Worker entry point: runs the nearest-codeword kernel over chunks of a shared vector set.
// Chunks are claimed with an atomic counter, so any worker may take any chunk; each vector's
// result depends only on the vector, its own bounds and the codebook, so the output is the
// same whichever worker computes it and however many there are.
import { parentPort } from 'node:worker_threads';
import { NearestKernel, type Drift, type SearchState } from '../wasm/kernel';
import { EncodeKernel } from '../wasm/encode-kernel';
import { addRow } from '../core/accumulate-centroids';
import { seedUpdateWithTotal, vectorNormsInto } from '../core/init';
import { decodeBands, planOfJob } from './decode-rows';
import type { AccumulateJob, AssignJob, AssignReply, DecodeJob, EncodeJob, SeedJob, WorkerJob } from './messages';

if (!parentPort) throw new Error('assign.task.ts must run in a worker thread');
const port = parentPort;
const kernel = new NearestKernel();

/**
 * Float64 sums of the vectors of the owned cells, in vector order: the same additions in
 * the same order as a single-threaded pass, so the centroids are bit-identical.
 */
function accumulate(job: AccumulateJob): void {
  const { d, n, cellStart, cellEnd } = job;
  const vectors = new Float32Array(job.vectors, job.vectorsByteOffset, n * d);
  const indices = new Uint32Array(job.indices, 0, n);
  const sums = new Float64Array(job.sums);
  sums.fill(0, cellStart * d, cellEnd * d);
  for (let v = 0; v < n; v++) {
    const j = indices[v];
    if (j < cellStart || j >= cellEnd) continue;
    addRow(sums, j * d, vectors, v * d, d);
  }
}

/** One k-means++ step over all the vectors; returns their D² total. */
function seed(job: SeedJob): number {
  const { d, n, k } = job;
  const vectors = new Float32Array(job.vectors, job.vectorsByteOffset, n * d);
  const state = {
    codewords: new Float32Array(job.codewords, 0, k * d),
    minDist: new Float64Array(job.minDist, 0, n),
    nearest: new Uint32Array(job.nearest, 0, n),
    fromNewest: new Float64Array(job.fromNewest, 0, k),
  };
  const norms = new Float64Array(job.norms, 0, n);
  if (job.c === 0) vectorNormsInto(vectors, d, norms);
  return seedUpdateWithTotal(vectors, d, state, norms, job.c);
}

let encodeKernel: EncodeKernel | undefined;

/** Encoding search over the chunks this worker claims (parallel/encode-search.ts); counts each finished chunk. */
function encodeChunks(job: EncodeJob): void {
  const d = job.width * job.height * job.channels;
  const control = new Int32Array(job.control);
  const chunks = Math.ceil(job.n / job.chunkSize);
  // Nothing to load when the caller has already claimed every chunk (a worker that started late).
  if (Atomics.load(control, 0) >= chunks) return;
  const vectors = new Float32Array(job.vectors, job.vectorsByteOffset, job.n * d);
  const indices = new Uint32Array(job.indices, 0, job.n);
  const distances = new Float64Array(job.distances, 0, job.n);
  encodeKernel ??= new EncodeKernel();
  encodeKernel.setCodebook(new Float32Array(job.codewords, 0, job.k * d), job.k, job);
  for (;;) {
    if (Atomics.load(control, 1) !== 0) break;
    const chunk = Atomics.add(control, 0, 1);
    if (chunk >= chunks) break;
    const start = chunk * job.chunkSize;
    encodeKernel.encodeRange(vectors, start, Math.min(job.n, start + job.chunkSize), indices, distances);
    Atomics.add(control, 2, 1);
  }
}

/** Decoding over the bands this worker claims (parallel/decode-rows.ts). */
function decodeJob(job: DecodeJob): void {
  const out = new Uint8Array(job.out.buffer, job.out.byteOffset, job.out.length);
  decodeBands(planOfJob(job), out, new Int32Array(job.control), job.bandRows);
}

port.on('message', (message: WorkerJob) => {
  if (message.kind === 'accumulate' || message.kind === 'seed-batch' || message.kind === 'encode' || message.kind === 'decode') {
    try {
      const reply: AssignReply = { jobId: message.jobId, redecided: 0, searched: 0 };
      if (message.kind === 'seed-batch') reply.totals = message.steps.map(seed);
      else if (message.kind === 'encode') encodeChunks(message);
      else if (message.kind === 'decode') decodeJob(message);
      else accumulate(message);
      port.postMessage(reply);
    } catch (err) {
      const error = err instanceof Error ? err.message : String(err);
      port.postMessage({ jobId: message.jobId, redecided: 0, searched: 0, error } satisfies AssignReply);
    }
    return;
  }
  const job: AssignJob = message;
  let redecided = 0;
  let searched = 0;
  try {
    const vectors = new Float32Array(job.vectors, job.vectorsByteOffset, job.n * job.d);
    const codewords = new Float32Array(job.codewords, 0, job.k * job.d);
    const state: SearchState = {
      indices: new Uint32Array(job.indices, 0, job.n),
      distances: new Float64Array(job.distances, 0, job.n),
      blockLower: new Float32Array(job.blockLower),
    };
    const drift: Drift | undefined = job.drift && { blockMoved: new Float64Array(job.drift.blockMoved) };
    const control = new Int32Array(job.control);
    kernel.setCodebook(codewords, job.k, job.d, new Uint32Array(job.order, 0, job.k), job.groupShift);
    for (;;) {
      if (Atomics.load(control, 1) !== 0) break; // cancelled: stop after the current chunk
      const chunk = Atomics.add(control, 0, 1);
      const start = chunk * job.chunkSize;
      if (start >= job.n) break;
      const end = Math.min(job.n, start + job.chunkSize);
      if (drift) {
        const r = kernel.assignBounded(vectors, start, end, state, drift);
        redecided += r.redecided;
        searched += r.searched;
      } else {
        redecided += kernel.assignRange(
          vectors, start, end, state.indices, state.distances, undefined,
          state.blockLower.length > 0 ? state.blockLower : undefined,
        );
        searched += end - start;
      }
    }
    const reply: AssignReply = { jobId: job.jobId, redecided, searched };
    port.postMessage(reply);
  } catch (err) {
    const reply: AssignReply = {
      jobId: job.jobId, redecided, searched, error: err instanceof Error ? err.message : String(err),
    };
    port.postMessage(reply);
  }
});
