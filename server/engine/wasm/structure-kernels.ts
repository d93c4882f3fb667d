import { kernelModule } from './kernel';

interface KernelExports {
  memory: WebAssembly.Memory;
  descendTree(
    xPtr: number, n: number, d: number, cPtr: number, childPtr: number, wPtr: number, thPtr: number, radPtr: number, slack: number, up: number,
    xsPtr: number, leafPtr: number, pathPtr: number, lenPtr: number, distPtr: number,
  ): number;
  scoreStage(restPtr: number, rows: number, d: number, wPtr: number, k: number, hnPtr: number, rrPtr: number, outPtr: number): void;
  residualGreedy(
    xPtr: number, n: number, d: number, wPtr: number, hnPtr: number, stages: number, offsetsPtr: number, sizesPtr: number, radPtr: number,
    slack: number, up: number, restPtr: number, partialPtr: number, scoresPtr: number, reconPtr: number, idxPtr: number, distPtr: number,
  ): number;
}

/** A tree's per-node tests as ../structures/tree-search.ts lays them out (breadth-first, nodes × … each). */
export interface TreeTests {
  d: number;
  children: Int32Array; // nodes × 2
  normals: Float64Array; // nodes × d
  thresholds: Float64Array; // nodes
  radii: Float64Array; // nodes
  slack: number;
  /** The upward nudge applied to ‖x‖ so it bounds from above. */
  up: number;
}

export interface TreeKernelResult {
  leaves: Uint32Array;
  paths: Uint32Array;
  lengths: Uint8Array;
  distances: Float64Array;
  redecided: number;
}

const PAGE = 65536;
/** Vectors per call into the module: their rows and outputs stay a few hundred kilobytes. */
const CHUNK = 4096;
const align = (n: number, a: number) => Math.ceil(n / a) * a;

// One instance per thread (module state is per worker), made at first use. The searches below are synchronous and
// each lays out the memory from offset 64 afresh, so they share it.
let instance: KernelExports | undefined;
const kernel = () => (instance ??= new WebAssembly.Instance(kernelModule(), {}).exports as unknown as KernelExports);

function ensureBytes(k: KernelExports, end: number): ArrayBuffer {
  const have = k.memory.buffer.byteLength;
  if (end > have) k.memory.grow(Math.ceil((end - have) / PAGE));
  return k.memory.buffer;
}

/**
 * Runs the descent of assembly/assign-nearest.ts `descendTree` over vectors (N × d f32, row-major) with the tree's
 * tests and codewords (nodes × d f32): the leaves, paths, path lengths and exact leaf distances, chunk by chunk.
 */
export function kernelDescendTree(tests: TreeTests, codewords: Float32Array, vectors: Float32Array): TreeKernelResult {
  const k = kernel();
  const { d } = tests;
  const nodes = tests.thresholds.length;
  const n = vectors.length / d;
  const chunk = Math.min(CHUNK, Math.max(1, n));
  const childPtr = 64;
  const wPtr = align(childPtr + nodes * 8, 64);
  const thPtr = align(wPtr + nodes * d * 8, 64);
  const radPtr = align(thPtr + nodes * 8, 64);
  const cPtr = align(radPtr + nodes * 8, 64);
  const xsPtr = align(cPtr + nodes * d * 4, 64);
  const xPtr = align(xsPtr + d * 8, 64);
  const leafPtr = align(xPtr + chunk * d * 4, 64);
  const pathPtr = align(leafPtr + chunk * 4, 64);
  const lenPtr = align(pathPtr + chunk * 4, 64);
  const distPtr = align(lenPtr + chunk, 64);
  const buf = ensureBytes(k, distPtr + chunk * 8);
  new Int32Array(buf, childPtr, nodes * 2).set(tests.children);
  new Float64Array(buf, wPtr, nodes * d).set(tests.normals);
  new Float64Array(buf, thPtr, nodes).set(tests.thresholds);
  new Float64Array(buf, radPtr, nodes).set(tests.radii);
  new Float32Array(buf, cPtr, nodes * d).set(codewords);
  const x = new Float32Array(buf, xPtr, chunk * d);
  const out: TreeKernelResult = {
    leaves: new Uint32Array(n), paths: new Uint32Array(n), lengths: new Uint8Array(n), distances: new Float64Array(n), redecided: 0,
  };
  for (let from = 0; from < n; from += chunk) {
    const m = Math.min(chunk, n - from);
    x.set(vectors.subarray(from * d, (from + m) * d));
    out.redecided += k.descendTree(xPtr, m, d, cPtr, childPtr, wPtr, thPtr, radPtr, tests.slack, tests.up, xsPtr, leafPtr, pathPtr, lenPtr, distPtr);
    out.leaves.set(new Uint32Array(buf, leafPtr, m), from);
    out.paths.set(new Uint32Array(buf, pathPtr, m), from);
    out.lengths.set(new Uint8Array(buf, lenPtr, m), from);
    out.distances.set(new Float64Array(buf, distPtr, m), from);
  }
  return out;
}

/**
 * The scoring step of a residual codebook's stage search in the engine's WebAssembly module: the codewords (total × d,
 * converted once to float64) and their ‖w‖²/2 stay in the module; `rest` (rows × d), `restNorms` (rows) and `scores`
 * (rows × the widest stage) are views of its memory that the caller fills and reads, valid until the next search.
 */
export class StageScorer {
  readonly rest: Float64Array;
  readonly restNorms: Float64Array;
  readonly scores: Float64Array;
  private readonly k = kernel();
  private readonly wPtr: number;
  private readonly hnPtr: number;
  private readonly restPtr: number;
  private readonly rrPtr: number;
  private readonly outPtr: number;
  private readonly end: number;

  constructor(private readonly d: number, codewords: Float32Array, halfNorms: Float64Array, rows: number, widest: number) {
    const total = halfNorms.length;
    this.wPtr = 64;
    this.hnPtr = align(this.wPtr + total * d * 8, 64);
    this.restPtr = align(this.hnPtr + total * 8, 64);
    this.rrPtr = align(this.restPtr + rows * d * 8, 64);
    this.outPtr = align(this.rrPtr + rows * 8, 64);
    this.end = align(this.outPtr + rows * widest * 8, 64);
    const buf = ensureBytes(this.k, this.end);
    new Float64Array(buf, this.wPtr, total * d).set(codewords);
    new Float64Array(buf, this.hnPtr, total).set(halfNorms);
    this.rest = new Float64Array(buf, this.restPtr, rows * d);
    this.restNorms = new Float64Array(buf, this.rrPtr, rows);
    this.scores = new Float64Array(buf, this.outPtr, rows * widest);
  }

  /** scores[r·size + j] = restNorms[r] + 2·(‖w‖²/2 − rest_r·w) for codewords first..first+size−1 of the table and rows 0..rows−1. */
  score(rows: number, first: number, size: number): void {
    this.k.scoreStage(this.restPtr, rows, this.d, this.wPtr + first * this.d * 8, size, this.hnPtr + first * 8, this.rrPtr, this.outPtr);
  }

  /**
   * The whole greedy search (M = 1) in the module, block by block (assembly `residualGreedy`): stage s's codewords start
   * at table index offsets[s], sizes[s] of them; radii[s] bounds their norms. The views above are overwritten.
   */
  greedy(vectors: Float32Array, offsets: readonly number[], sizes: readonly number[], radii: Float64Array, slack: number, up: number) {
    const { d } = this;
    const stages = sizes.length;
    const n = vectors.length / d;
    const chunk = Math.min(CHUNK, Math.max(1, n));
    const offsetsPtr = this.end;
    const sizesPtr = align(offsetsPtr + stages * 4, 64);
    const radPtr = align(sizesPtr + stages * 4, 64);
    const partialPtr = align(radPtr + stages * 8, 64);
    const reconPtr = align(partialPtr + d * 8, 64);
    const xPtr = align(reconPtr + d * 4, 64);
    const idxPtr = align(xPtr + chunk * d * 4, 64);
    const distPtr = align(idxPtr + chunk * stages * 4, 64);
    const buf = ensureBytes(this.k, distPtr + chunk * 8);
    new Int32Array(buf, offsetsPtr, stages).set(offsets);
    new Int32Array(buf, sizesPtr, stages).set(sizes);
    new Float64Array(buf, radPtr, stages).set(radii);
    const x = new Float32Array(buf, xPtr, chunk * d);
    const indices = sizes.map(() => new Uint32Array(n));
    const distances = new Float64Array(n);
    let rescored = 0;
    for (let from = 0; from < n; from += chunk) {
      const m = Math.min(chunk, n - from);
      x.set(vectors.subarray(from * d, (from + m) * d));
      rescored += this.k.residualGreedy(
        xPtr, m, d, this.wPtr, this.hnPtr, stages, offsetsPtr, sizesPtr, radPtr, slack, up, this.restPtr, partialPtr, this.outPtr, reconPtr, idxPtr, distPtr,
      );
      const idx = new Uint32Array(buf, idxPtr, m * stages);
      for (let v = 0; v < m; v++) for (let t = 0; t < stages; t++) indices[t][from + v] = idx[v * stages + t];
      distances.set(new Float64Array(buf, distPtr, m), from);
    }
    return { indices, distances, rescored };
  }
}
