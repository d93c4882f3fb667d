import { nearestKernelBase64 } from './nearest-kernel-binary';

interface KernelExports {
  memory: WebAssembly.Memory;
  resetState(statePtr: number, n: number): void;
  prepareRows(xoPtr: number, xPtr: number, n: number, d: number, dp: number, shiftPtr: number): void;
  scanTile(
    xPtr: number, n: number, dp: number, ctPtr: number, cnPtr: number, kp: number,
    statePtr: number, jStart: number, jEnd: number,
  ): void;
  finishRows(
    xPtr: number, xoPtr: number, n: number, d: number, dp: number, ctPtr: number, cnPtr: number, kp: number,
    cPtr: number, k: number, maxNorm: number, bandPtr: number,
    statePtr: number, idxPtr: number, distPtr: number, lowerPtr: number,
  ): number;
}

/** Per-vector search state kept between passes: N entries each. */
export interface SearchState {
  indices: Uint32Array;
  distances: Float64Array;
  /** Lower bound on the distance (not squared) from the vector to every other codeword. */
  lower: Float64Array;
}

/** How far the codewords moved since the pass that produced a SearchState. */
export interface Drift {
  /** K entries: distance each codeword moved, rounded up. */
  moved: Float64Array;
  max: number;
  argMax: number;
  /** Largest move among the codewords other than argMax. */
  second: number;
}

/** Relative slack that keeps float64 rounding of the bounds on the safe side. */
const BOUND_SLACK = 1e-12;

let compiled: WebAssembly.Module | undefined;

function kernelModule(): WebAssembly.Module {
  // One compilation per thread; the binary is a few kilobytes.
  compiled ??= new WebAssembly.Module(Buffer.from(nearestKernelBase64, 'base64'));
  return compiled;
}

const PAGE = 65536;
/** Vectors handled per pass over the codeword tiles: x rows and their state stay in L2. */
const BATCH = 256;
/** Bytes of transposed codewords per tile, sized for the L1/L2 data caches. */
const TILE_BYTES = 32768;

const align = (n: number, a: number) => Math.ceil(n / a) * a;

/**
 * Nearest-codeword search for one thread: a WebAssembly SIMD kernel over the expansion
 * ‖x‖² − 2x·c + ‖c‖² in float32, followed by an exact float64 re-decision of every vector
 * whose runner-up lies within the kernel's proven rounding bound (see finishRows in
 * assembly/assign-nearest.ts). The result equals a float64 brute-force search with ties
 * to the lowest index; the distances are exact sums of float64 squared differences.
 */
export class NearestKernel {
  private readonly exports: KernelExports;
  private k = 0;
  private d = 0;
  private dp = 0;
  private kp = 0;
  private maxNorm = 0;
  private tile = 8;
  private cnPtr = 0;
  private ctPtr = 0;
  private cPtr = 0;
  private xPtr = 0;
  private xoPtr = 0;
  private bandPtr = 0;
  /** Holds d f64: the shift μ (codebook mean) applied to the kernel's float32 copies. */
  private shiftPtr = 0;
  private statePtr = 0;
  private idxPtr = 0;
  private distPtr = 0;
  private lowerPtr = 0;
  private codewords: Float32Array = new Float32Array(0);
  private rows = new Uint32Array(0);

  constructor() {
    const instance = new WebAssembly.Instance(kernelModule(), {});
    this.exports = instance.exports as unknown as KernelExports;
  }

  /** Loads a codebook: codewords K × d, row-major. Must precede assignRange. */
  setCodebook(codewords: Float32Array, k: number, d: number): void {
    const dp = align(d, 4);
    const kp = align(k, 16);
    this.k = k;
    this.d = d;
    this.dp = dp;
    this.kp = kp;
    this.tile = Math.max(16, Math.floor(TILE_BYTES / (dp * 4) / 16) * 16);
    this.shiftPtr = 64;
    this.cnPtr = align(this.shiftPtr + d * 8, 64);
    this.ctPtr = align(this.cnPtr + kp * 4, 64);
    this.cPtr = align(this.ctPtr + dp * kp * 4, 64);
    this.xPtr = align(this.cPtr + k * d * 4, 64);
    this.xoPtr = align(this.xPtr + BATCH * dp * 4, 64);
    this.bandPtr = align(this.xoPtr + BATCH * d * 4, 64);
    this.statePtr = align(this.bandPtr + kp * 4, 64);
    this.idxPtr = align(this.statePtr + BATCH * 48, 64);
    this.distPtr = align(this.idxPtr + BATCH * 4, 64);
    this.lowerPtr = align(this.distPtr + BATCH * 8, 64);
    this.ensureMemory(this.lowerPtr + BATCH * 8);
    this.codewords = codewords;

    const buf = this.exports.memory.buffer;
    const cn = new Float32Array(buf, this.cnPtr, kp);
    const ct = new Float32Array(buf, this.ctPtr, dp * kp);
    const c = new Float32Array(buf, this.cPtr, k * d);
    ct.fill(0);
    c.set(codewords.subarray(0, k * d));
    const shift = new Float64Array(buf, this.shiftPtr, d);
    shift.fill(0);
    for (let j = 0; j < k; j++) for (let i = 0; i < d; i++) shift[i] += codewords[j * d + i];
    // Any shift is exact in meaning (distances are shift-invariant); the mean makes the
    // norms in the error bound small. Rounded to float32 so x − μ is formed from two floats.
    for (let i = 0; i < d; i++) shift[i] = Math.fround(shift[i] / k);
    let maxSq = 0;
    for (let j = 0; j < k; j++) {
      const base = j * d;
      // Block layout (see assembly/assign-nearest.ts): block j >> 4, row i, lane j & 15.
      const at = (j >> 4) * dp * 16 + (j & 15);
      for (let i = 0; i < d; i++) ct[at + i * 16] = codewords[base + i] - shift[i];
      // Norm of the stored (rounded) shifted codeword, as the kernel sees it.
      let s = 0;
      for (let i = 0; i < d; i++) s += ct[at + i * 16] * ct[at + i * 16];
      cn[j] = s;
      if (s > maxSq) maxSq = s;
    }
    for (let j = k; j < kp; j++) cn[j] = Infinity;
    // The bound needs M ≥ every ‖c'_j‖; the tiny inflation covers the rounding of sqrt.
    this.maxNorm = Math.sqrt(maxSq) * (1 + 1e-12);
  }

  /**
   * Assigns vectors [start, end) of `vectors` (N × d, row-major) and writes their nearest
   * codeword and exact squared distance to outIdx/outDist at the same positions (and, when
   * given, the lower bound on the distance to every other codeword to outLower).
   * Returns how many vectors needed the exact re-decision.
   */
  assignRange(
    vectors: Float32Array, start: number, end: number, outIdx: Uint32Array, outDist: Float64Array,
    outLower?: Float64Array,
  ): number {
    return this.search(vectors, end - start, (i) => start + i, outIdx, outDist, outLower, true);
  }

  /**
   * Bounded pass (the bound test of G. Hamerly, "Making k-means even faster", SDM 2010):
   * a vector keeps its codeword a without a search when its exact distance to a is below
   * its lower bound to every other codeword, lowered by how far those codewords moved.
   * Either way the distance written is exact, and the choice equals the full search.
   * Vectors [start, end); state is read and updated in place. Returns the vectors that
   * needed a full search and how many of those were re-decided exactly.
   */
  assignBounded(
    vectors: Float32Array, start: number, end: number, state: SearchState, drift: Drift,
  ): { searched: number; redecided: number } {
    const { d } = this;
    const c = this.codewords;
    if (this.rows.length < end - start) this.rows = new Uint32Array(end - start);
    const rows = this.rows;
    let count = 0;
    for (let v = start; v < end; v++) {
      const a = state.indices[v];
      const lower = (state.lower[v] - (a === drift.argMax ? drift.second : drift.max)) * (1 - BOUND_SLACK);
      let s = 0;
      const vo = v * d;
      const co = a * d;
      for (let i = 0; i < d; i++) {
        const t = vectors[vo + i] - c[co + i];
        s += t * t;
      }
      if (Math.sqrt(s) * (1 + BOUND_SLACK) < lower) {
        state.distances[v] = s;
        state.lower[v] = lower;
      } else {
        rows[count++] = v;
      }
    }
    const redecided = this.search(vectors, count, (i) => rows[i], state.indices, state.distances, state.lower);
    return { searched: count, redecided };
  }

  /** Full search of `count` vectors, the i-th being row rowOf(i); results go to that row. */
  private search(
    vectors: Float32Array, count: number, rowOf: (i: number) => number,
    outIdx: Uint32Array, outDist: Float64Array, outLower?: Float64Array, contiguous = false,
  ): number {
    const { d, dp, k, kp, tile } = this;
    if (k === 0) throw new Error('NearestKernel: setCodebook must be called first');
    const e = this.exports;
    const buf = e.memory.buffer;
    const xo = new Float32Array(buf, this.xoPtr, BATCH * d);
    const idx = new Uint32Array(buf, this.idxPtr, BATCH);
    const dist = new Float64Array(buf, this.distPtr, BATCH);
    const low = new Float64Array(buf, this.lowerPtr, BATCH);
    let redecided = 0;
    for (let b = 0; b < count; b += BATCH) {
      const n = Math.min(BATCH, count - b);
      if (contiguous) {
        const first = rowOf(b);
        xo.set(vectors.subarray(first * d, (first + n) * d));
      } else {
        for (let v = 0; v < n; v++) {
          const src = rowOf(b + v) * d;
          xo.set(vectors.subarray(src, src + d), v * d);
        }
      }
      e.prepareRows(this.xoPtr, this.xPtr, n, d, dp, this.shiftPtr);
      e.resetState(this.statePtr, n);
      for (let j = 0; j < kp; j += tile) {
        e.scanTile(this.xPtr, n, dp, this.ctPtr, this.cnPtr, kp, this.statePtr, j, Math.min(kp, j + tile));
      }
      redecided += e.finishRows(
        this.xPtr, this.xoPtr, n, d, dp, this.ctPtr, this.cnPtr, kp, this.cPtr, k, this.maxNorm, this.bandPtr,
        this.statePtr, this.idxPtr, this.distPtr, this.lowerPtr,
      );
      for (let v = 0; v < n; v++) {
        const r = rowOf(b + v);
        outIdx[r] = idx[v];
        outDist[r] = dist[v];
        if (outLower) outLower[r] = Math.sqrt(low[v]) * (1 - BOUND_SLACK);
      }
    }
    return redecided;
  }

  private ensureMemory(bytes: number): void {
    const have = this.exports.memory.buffer.byteLength;
    if (bytes > have) this.exports.memory.grow(Math.ceil((bytes - have) / PAGE));
  }
}
