import { nearestKernelBase64 } from './nearest-kernel-binary';

interface KernelExports {
  memory: WebAssembly.Memory;
  resetState(statePtr: number, n: number, bminPtr: number, g: number): void;
  prepareRows(xoPtr: number, xPtr: number, n: number, d: number, dp: number, shiftPtr: number): void;
  planBlocks(
    n: number, d: number, g: number, gshift: number, full: boolean, xoPtr: number, cPtr: number, blowPtr: number, movedPtr: number,
    curPtr: number, ownPtr: number, upperPtr: number, curDistPtr: number,
    listPtr: number, listStride: number, countPtr: number, skippedMinPtr: number,
  ): number;
  scanBlocks(
    xPtr: number, dp: number, ctPtr: number, cnPtr: number, statePtr: number,
    g: number, listPtr: number, listStride: number, countPtr: number, bminPtr: number,
  ): void;
  finishRows(
    xPtr: number, xoPtr: number, n: number, d: number, dp: number, ctPtr: number, cnPtr: number, kp: number,
    cPtr: number, k: number, maxNorm: number, bandPtr: number,
    statePtr: number, idxPtr: number, distPtr: number, lowerPtr: number,
    g: number, gshift: number, bminPtr: number, blowPtr: number, permPtr: number,
    haveCur: boolean, curPtr: number, curDistPtr: number, pendingPtr: number,
  ): number;
}

/** Per-vector search state kept between passes: N entries each. */
export interface SearchState {
  indices: Uint32Array;
  distances: Float64Array;
  /**
   * N × G (G groups of 16·2^s codewords, see setCodebook; G entries per vector): a lower bound on the
   * distance (not squared) from the vector to every codeword of each group.
   */
  blockLower: Float32Array;
}

/** How far the codewords moved since the pass that produced a SearchState. */
export interface Drift {
  /** G entries: the largest move within each group of 16·2^s positions (see setCodebook). */
  blockMoved: Float64Array;
}

/** Relative slack that keeps float64 rounding of the bounds on the safe side. */
const BOUND_SLACK = 1e-12;

let compiled: WebAssembly.Module | undefined;

export function kernelModule(): WebAssembly.Module {
  // One compilation per thread; the binary is a few kilobytes.
  compiled ??= new WebAssembly.Module(Buffer.from(nearestKernelBase64, 'base64'));
  return compiled;
}

const PAGE = 65536;
/** Vectors handled per pass over the codeword blocks: x rows and their state stay in L2. */
const BATCH = 256;
/** Cap on the per-batch block tables (lists, minima, bounds: batch × G entries each). */
const BATCH_BLOCK_ENTRIES = 1 << 20;

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
  /** Blocks of 16 codewords. */
  private g = 0;
  /** Blocks per bound group: 2^gshift. */
  private gshift = 0;
  /** Bound groups: ⌈g / 2^gshift⌉. */
  private gg = 0;
  /** Vectors per batch (BATCH unless the codebook is huge). */
  private batch = BATCH;
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
  private listPtr = 0;
  private countPtr = 0;
  private bminPtr = 0;
  private blowPtr = 0;
  private permPtr = 0;
  private movedPtr = 0;
  private upperPtr = 0;
  private ownPtr = 0;
  private curPtr = 0;
  private curDistPtr = 0;
  private pendingPtr = 0;
  private skippedPtr = 0;
  /** Position of each codeword in the block layout (the inverse of the order). */
  private position = new Uint32Array(0);
  private codewords: Float32Array = new Float32Array(0);
  private rows = new Uint32Array(0);
  /** Vectors of the last bounded search that scanned only their own block. */
  private pruned = 0;

  constructor() {
    const instance = new WebAssembly.Instance(kernelModule(), {});
    this.exports = instance.exports as unknown as KernelExports;
  }

  /**
   * Loads a codebook: codewords K × d, row-major. `order` (K entries, a permutation)
   * lists the codeword placed at each position of the block layout; bounds refer to groups
   * of 16·2^groupShift consecutive positions (2^groupShift blocks of 16; the last group may
   * be shorter). Must precede assignRange.
   */
  setCodebook(codewords: Float32Array, k: number, d: number, order?: Uint32Array, groupShift = 0): void {
    const dp = align(d, 4);
    const kp = align(k, 16);
    this.k = k;
    this.d = d;
    this.dp = dp;
    this.kp = kp;
    this.g = kp / 16;
    this.gshift = groupShift;
    this.gg = Math.ceil(this.g / 2 ** groupShift);
    // Huge codebooks get smaller batches, so the block tables stay a few megabytes.
    this.batch = Math.max(2, Math.min(BATCH, Math.floor(BATCH_BLOCK_ENTRIES / this.g)));
    const batch = this.batch;
    this.shiftPtr = 64;
    this.cnPtr = align(this.shiftPtr + d * 8, 64);
    this.ctPtr = align(this.cnPtr + kp * 4, 64);
    this.cPtr = align(this.ctPtr + dp * kp * 4, 64);
    this.xPtr = align(this.cPtr + k * d * 4, 64);
    this.xoPtr = align(this.xPtr + batch * dp * 4, 64);
    this.bandPtr = align(this.xoPtr + batch * d * 4, 64);
    this.statePtr = align(this.bandPtr + kp * 4, 64);
    this.idxPtr = align(this.statePtr + batch * 48, 64);
    this.distPtr = align(this.idxPtr + batch * 4, 64);
    this.lowerPtr = align(this.distPtr + batch * 8, 64);
    this.listPtr = align(this.lowerPtr + batch * 8, 64);
    this.countPtr = align(this.listPtr + this.g * batch * 4, 64);
    this.bminPtr = align(this.countPtr + this.g * 4, 64);
    this.blowPtr = align(this.bminPtr + batch * this.g * 4, 64);
    this.permPtr = align(this.blowPtr + batch * this.g * 4, 64);
    this.movedPtr = align(this.permPtr + k * 4, 64);
    this.upperPtr = align(this.movedPtr + this.gg * 8, 64);
    this.ownPtr = align(this.upperPtr + batch * 8, 64);
    this.curPtr = align(this.ownPtr + batch * 4, 64);
    this.skippedPtr = align(this.curPtr + batch * 4, 64);
    this.curDistPtr = align(this.skippedPtr + batch * 8, 64);
    this.pendingPtr = align(this.curDistPtr + batch * 8, 64);
    this.ensureMemory(this.pendingPtr + batch * 4);
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
    const perm = new Uint32Array(buf, this.permPtr, k);
    if (this.position.length !== k) this.position = new Uint32Array(k);
    for (let p = 0; p < k; p++) {
      const j = order ? order[p] : p;
      perm[p] = j;
      this.position[j] = p;
    }
    for (let p = 0; p < k; p++) {
      const j = perm[p];
      const base = j * d;
      // Block layout (see assembly/assign-nearest.ts): block p >> 4, row i, lane p & 15.
      const at = (p >> 4) * dp * 16 + (p & 15);
      for (let i = 0; i < d; i++) ct[at + i * 16] = codewords[base + i] - shift[i];
      // Norm of the stored (rounded) shifted codeword, as the kernel sees it.
      let s = 0;
      for (let i = 0; i < d; i++) s += ct[at + i * 16] * ct[at + i * 16];
      cn[p] = s;
      if (s > maxSq) maxSq = s;
    }
    for (let j = k; j < kp; j++) cn[j] = Infinity;
    // The bound needs M ≥ every ‖c'_j‖; the tiny inflation covers the rounding of sqrt.
    this.maxNorm = Math.sqrt(maxSq) * (1 + 1e-12);
  }

  /** Bound groups of the loaded codebook: the G of SearchState.blockLower. */
  get blocks(): number {
    return this.gg;
  }

  /**
   * Assigns vectors [start, end) of `vectors` (N × d, row-major) and writes their nearest
   * codeword and exact squared distance to outIdx/outDist at the same positions (and, when
   * given, the lower bound on the distance to every other codeword to outLower and the
   * group bounds, N × blocks, to outBlocks).
   * Returns how many vectors needed the exact re-decision.
   */
  assignRange(
    vectors: Float32Array, start: number, end: number, outIdx: Uint32Array, outDist: Float64Array,
    outLower?: Float64Array, outBlocks?: Float32Array,
  ): number {
    if (this.rows.length < end - start) this.rows = new Uint32Array(end - start);
    for (let v = start; v < end; v++) this.rows[v - start] = v;
    return this.search(vectors, end - start, outIdx, outDist, outLower, outBlocks);
  }

  /**
   * Bounded pass, with one bound per vector and group of codewords (the grouping of
   * Y. Ding et al., "Yinyang K-means", ICML 2015; the bound update with the codeword
   * drift follows G. Hamerly, "Making k-means even faster", SDM 2010): with u the exact
   * distance from a vector to its current codeword a, only the blocks whose bound,
   * lowered by the group's largest move, is not above u are scanned, and always a's own
   * group. Every codeword of a skipped group is provably farther than a, so it can neither
   * be the nearest nor tie with it, and the scanned set decides exactly as a full search
   * would; the distance written is exact. Vectors [start, end); state is read and updated
   * in place. Returns how many vectors searched beyond their own block and how many were
   * re-decided exactly.
   */
  assignBounded(
    vectors: Float32Array, start: number, end: number, state: SearchState, drift: Drift,
  ): { searched: number; redecided: number } {
    const count = end - start;
    if (this.rows.length < count) this.rows = new Uint32Array(count);
    for (let v = start; v < end; v++) this.rows[v - start] = v;
    this.pruned = 0;
    const redecided = this.search(
      vectors, count, state.indices, state.distances, undefined, state.blockLower, drift,
    );
    return { searched: count - this.pruned, redecided };
  }

  /**
   * Search of `count` vectors, the i-th being row rows[i]; results go to that row. With a
   * drift (a bounded pass) each vector scans only the blocks its bounds cannot exclude
   * given its current codeword outIdx[row]; otherwise every block.
   */
  private search(
    vectors: Float32Array, count: number,
    outIdx: Uint32Array, outDist: Float64Array, outLower?: Float64Array, outBlocks?: Float32Array,
    drift?: Drift,
  ): number {
    const { d, dp, k, kp, g, gg, gshift, batch } = this;
    if (k === 0) throw new Error('NearestKernel: setCodebook must be called first');
    const rows = this.rows;
    const e = this.exports;
    const buf = e.memory.buffer;
    const xo = new Float32Array(buf, this.xoPtr, batch * d);
    const idx = new Uint32Array(buf, this.idxPtr, batch);
    const dist = new Float64Array(buf, this.distPtr, batch);
    const low = new Float64Array(buf, this.lowerPtr, batch);
    const blow = new Float32Array(buf, this.blowPtr, batch * gg);
    const cur = new Int32Array(buf, this.curPtr, batch);
    const own = new Int32Array(buf, this.ownPtr, batch);
    const skippedMin = new Float64Array(buf, this.skippedPtr, batch);
    const bounded = drift !== undefined && outBlocks !== undefined;
    if (bounded) new Float64Array(buf, this.movedPtr, gg).set(drift.blockMoved);
    let redecided = 0;
    for (let b = 0; b < count; b += batch) {
      const n = Math.min(batch, count - b);
      // Rows come in increasing order, mostly in runs: each run is one copy.
      for (let v = 0; v < n;) {
        const first = rows[b + v];
        let run = 1;
        while (v + run < n && rows[b + v + run] === first + run) run++;
        xo.set(vectors.subarray(first * d, (first + run) * d), v * d);
        if (bounded) blow.set(outBlocks.subarray(first * gg, (first + run) * gg), v * gg);
        v += run;
      }
      if (bounded) {
        for (let v = 0; v < n; v++) {
          const a = outIdx[rows[b + v]];
          cur[v] = a;
          own[v] = this.position[a] >> (4 + gshift);
        }
      }
      this.pruned += e.planBlocks(
        n, d, g, gshift, !bounded, this.xoPtr, this.cPtr, this.blowPtr, this.movedPtr,
        this.curPtr, this.ownPtr, this.upperPtr, this.curDistPtr, this.listPtr, batch, this.countPtr, this.skippedPtr,
      );
      e.prepareRows(this.xoPtr, this.xPtr, n, d, dp, this.shiftPtr);
      e.resetState(this.statePtr, n, this.bminPtr, g);
      e.scanBlocks(this.xPtr, dp, this.ctPtr, this.cnPtr, this.statePtr, g, this.listPtr, batch, this.countPtr, this.bminPtr);
      redecided += e.finishRows(
        this.xPtr, this.xoPtr, n, d, dp, this.ctPtr, this.cnPtr, kp, this.cPtr, k, this.maxNorm, this.bandPtr,
        this.statePtr, this.idxPtr, this.distPtr, this.lowerPtr, g, gshift, this.bminPtr, this.blowPtr,
        this.permPtr, bounded, this.curPtr, this.curDistPtr, this.pendingPtr,
      );
      for (let v = 0; v < n; v++) {
        const r = rows[b + v];
        outIdx[r] = idx[v];
        outDist[r] = dist[v];
        // Codewords of skipped blocks are bounded by those blocks' bounds.
        if (outLower) outLower[r] = Math.min(Math.sqrt(low[v]) * (1 - BOUND_SLACK), skippedMin[v]);
      }
      if (outBlocks) {
        for (let v = 0; v < n;) {
          const first = rows[b + v];
          let run = 1;
          while (v + run < n && rows[b + v + run] === first + run) run++;
          outBlocks.set(blow.subarray(v * gg, (v + run) * gg), first * gg);
          v += run;
        }
      }
    }
    return redecided;
  }

  private ensureMemory(bytes: number): void {
    const have = this.exports.memory.buffer.byteLength;
    if (bytes > have) this.exports.memory.grow(Math.ceil((bytes - have) / PAGE));
  }
}
