import { kernelModule } from './kernel';

interface EncodeExports {
  memory: WebAssembly.Memory;
  encodeRows(
    xoPtr: number, n: number, d: number, dp: number, h: number, wc: number, wcp: number,
    cmatPtr: number, rmatPtr: number, ordPtr: number, padPtr: number, tmpPtr: number, rotPtr: number, xr: number,
    zPtr: number, leadPtr: number, ztPtr: number, ztRestPtr: number,
    cPtr: number, permPtr: number, k: number, maxNorm: number, eta: number,
    candPtr: number, pendPtr: number, idxPtr: number, distPtr: number,
  ): number;
}

/** A block's shape as the vector holds it: rows, pixels per row, components per pixel (io/patches.ts order). */
export interface BlockShape {
  width: number;
  height: number;
  channels: number;
}

const PAGE = 65536;
/** Vectors per call into the kernel: their rows and outputs stay in the L2 cache. */
const ENCODE_BATCH = 1024;
/** Leading coefficients of the first, four-candidates-at-a-time filter (ENC_LEAD of the kernel). */
const LEAD = 8;
/** Unit roundoff of float32, 2^-24. */
const U32 = 2 ** -24;
const align = (n: number, a: number) => Math.ceil(n / a) * a;
const gammaOf = (n: number) => (n * U32) / (1 - n * U32);

/** The orthonormal DCT-II matrix of size n (row u: the u-th basis vector), float64. */
export function dctMatrix(n: number): Float64Array {
  const c = new Float64Array(n * n);
  for (let u = 0; u < n; u++) {
    const a = Math.sqrt((u === 0 ? 1 : 2) / n);
    for (let i = 0; i < n; i++) c[u * n + i] = a * Math.cos((Math.PI * (2 * i + 1) * u) / (2 * n));
  }
  return c;
}

/**
 * The bound η of encodeRows (assembly/assign-nearest.ts) on ‖ŷ − Qx‖/‖x‖ for the float32 two-stage rotation: a dot
 * product of n terms errs by at most γ_n·|a|·|b| (N. J. Higham, Accuracy and Stability of Numerical Algorithms,
 * 2nd ed., §3.1), so a stage with `outputs` outputs per input row errs by γ_n·√outputs·‖input‖; the float32 rounding
 * of the matrices adds u·‖C‖_F = u·√n per stage. Inflated by 10 % and twice the matrix term for the second-order
 * products, plus 1e-12 for the float64 arithmetic of the codewords' rotation.
 */
export function rotationErrorBound(shape: BlockShape): number {
  const wc = shape.width * shape.channels;
  const h = shape.height;
  return 1.1 * (gammaOf(wc) * Math.sqrt(wc) + gammaOf(h) * Math.sqrt(h) + 2 * U32 * (Math.sqrt(wc) + Math.sqrt(h))) + 1e-12;
}

/**
 * Nearest-codeword search for encoding, one thread: exact (the index of the smallest float64 squared distance, ties
 * to the lowest index; the distance written is exactDistance's), with cheap exact rejection in a rotated basis
 * instead of a scan of every codeword (encodeRows in assembly/assign-nearest.ts). Nothing is kept between calls.
 */
export class EncodeKernel {
  private readonly exports: EncodeExports;
  private ready = false;
  private k = 0;
  private d = 0;
  private dp = 0;
  private h = 0;
  private wc = 0;
  private wcp = 0;
  private maxNorm = 0;
  private eta = 0;
  private readonly ptr = {
    cmat: 0, rmat: 0, ord: 0, pad: 0, tmp: 0, rot: 0, xr: 0, z: 0, leadv: 0, zt: 0, ztRest: 0, c: 0, perm: 0, cand: 0, xo: 0, pend: 0, idx: 0, dist: 0,
  };

  constructor() {
    this.exports = new WebAssembly.Instance(kernelModule(), {}).exports as unknown as EncodeExports;
  }

  /** Loads a codebook (K × d, row-major, d = width·height·channels); must precede encodeRange. */
  setCodebook(codewords: Float32Array, k: number, shape: BlockShape): void {
    const { width: w, height: h, channels: ch } = shape;
    const wc = w * ch;
    const wcp = align(wc, 4);
    const d = h * wc;
    const dp = align(d, 4);
    Object.assign(this, { k, d, dp, h, wc, wcp, eta: rotationErrorBound(shape) });
    const p = this.ptr;
    p.cmat = 64;
    p.rmat = align(p.cmat + h * h * 4, 64);
    p.ord = align(p.rmat + wc * wcp * 4, 64);
    p.pad = align(p.ord + d * 4, 64);
    p.tmp = align(p.pad + h * wcp * 4, 64);
    p.rot = align(p.tmp + h * wcp * 4, 64);
    p.xr = align(p.rot + h * wcp * 4, 64);
    p.z = align(p.xr + Math.max(dp, LEAD) * 4, 64);
    const lead = Math.min(LEAD, d);
    const groups = Math.ceil(k / 4);
    p.leadv = align(p.z + k * dp * 4, 64);
    p.zt = align(p.leadv + k * 4, 64);
    p.ztRest = align(p.zt + groups * LEAD * 16, 64);
    p.c = align(p.ztRest + groups * 16, 64);
    p.perm = align(p.c + k * d * 4, 64);
    p.cand = align(p.perm + k * 4, 64);
    p.xo = align(p.cand + k * 8, 64);
    p.pend = align(p.xo + ENCODE_BATCH * d * 4, 64);
    p.idx = align(p.pend + ENCODE_BATCH * 8, 64);
    p.dist = align(p.idx + ENCODE_BATCH * 4, 64);
    const bytes = p.dist + ENCODE_BATCH * 8;
    const have = this.exports.memory.buffer.byteLength;
    if (bytes > have) this.exports.memory.grow(Math.ceil((bytes - have) / PAGE));
    const buf = this.exports.memory.buffer;

    const ch64 = dctMatrix(h);
    const cw64 = dctMatrix(w);
    new Float32Array(buf, p.cmat, h * h).set(ch64);
    // (C_w ⊗ I_channels) transposed: input component j = col·ch + chan feeds output o = u·ch + chan.
    const rmat = new Float32Array(buf, p.rmat, wc * wcp);
    rmat.fill(0);
    for (let col = 0; col < w; col++) {
      for (let u = 0; u < w; u++) for (let c = 0; c < ch; c++) rmat[(col * ch + c) * wcp + u * ch + c] = cw64[u * w + col];
    }
    // Every codeword rotated in float64 (same separable stages), at rotated index v·wcp + o.
    const rotated = new Float64Array(k * h * wcp);
    const tmp = new Float64Array(h * wc);
    let maxSq = 0;
    for (let j = 0; j < k; j++) {
      const base = j * d;
      let ss = 0;
      for (let i = 0; i < d; i++) ss += codewords[base + i] * codewords[base + i];
      if (ss > maxSq) maxSq = ss;
      tmp.fill(0);
      for (let v = 0; v < h; v++) for (let r = 0; r < h; r++) for (let i = 0; i < wc; i++) tmp[v * wc + i] += ch64[v * h + r] * codewords[base + r * wc + i];
      for (let v = 0; v < h; v++) {
        for (let u = 0; u < w; u++) {
          for (let c = 0; c < ch; c++) {
            let s = 0;
            for (let col = 0; col < w; col++) s += cw64[u * w + col] * tmp[v * wc + col * ch + c];
            rotated[j * h * wcp + v * wcp + u * ch + c] = s;
          }
        }
      }
    }
    this.maxNorm = Math.sqrt(maxSq) * (1 + 1e-12);
    // Coefficients in order of decreasing variance over the codebook (ties by index), so that partial sums grow fast.
    const coeffs: number[] = [];
    for (let v = 0; v < h; v++) for (let o = 0; o < wc; o++) coeffs.push(v * wcp + o);
    const variance = new Map<number, number>();
    for (const at of coeffs) {
      let s = 0;
      let s2 = 0;
      for (let j = 0; j < k; j++) {
        const t = rotated[j * h * wcp + at];
        s += t;
        s2 += t * t;
      }
      variance.set(at, s2 / k - (s / k) ** 2);
    }
    const ord = coeffs.map((at, i) => ({ at, i, v: variance.get(at)! })).sort((a, b) => b.v - a.v || a.i - b.i).map((e) => e.at);
    new Int32Array(buf, p.ord, d).set(ord);
    // Codewords sorted by their leading coefficient (as float32, what the kernel compares), ties by index.
    const leading = new Float32Array(k);
    for (let j = 0; j < k; j++) leading[j] = rotated[j * h * wcp + ord[0]];
    const perm = Uint32Array.from({ length: k }, (_, j) => j).sort((a, b) => leading[a] - leading[b] || a - b);
    const z = new Float32Array(buf, p.z, k * dp);
    const leadv = new Float32Array(buf, p.leadv, k);
    // Groups of four positions, coefficient-major: group g, coefficient l, lane q & 3.
    const zt = new Float32Array(buf, p.zt, groups * LEAD * 4);
    const ztRest = new Float32Array(buf, p.ztRest, groups * 4);
    z.fill(0);
    zt.fill(0);
    ztRest.fill(0);
    for (let q = 0; q < k; q++) {
      const j = perm[q];
      for (let l = 0; l < d; l++) z[q * dp + l] = rotated[j * h * wcp + ord[l]];
      leadv[q] = z[q * dp];
      for (let l = 0; l < lead; l++) zt[(q >> 2) * LEAD * 4 + l * 4 + (q & 3)] = z[q * dp + l];
      let rs = 0;
      for (let l = lead; l < d; l++) rs += z[q * dp + l] * z[q * dp + l];
      ztRest[q] = Math.sqrt(rs);
    }
    new Uint32Array(buf, p.perm, k).set(perm);
    new Float32Array(buf, p.c, k * d).set(codewords.subarray(0, k * d));
    this.ready = true;
  }

  /**
   * Codes vectors [start, end) of `vectors` (N × d, row-major): nearest index to outIdx and exact squared distance to
   * outDist at the same positions. Returns how many vectors compared more than one finalist exactly.
   */
  encodeRange(vectors: Float32Array, start: number, end: number, outIdx: Uint32Array, outDist: Float64Array): number {
    if (!this.ready) throw new Error('EncodeKernel: setCodebook must be called first');
    const { d, dp, h, wc, wcp, k, maxNorm, eta, ptr: p } = this;
    const e = this.exports;
    const buf = e.memory.buffer;
    const xo = new Float32Array(buf, p.xo, ENCODE_BATCH * d);
    const idx = new Uint32Array(buf, p.idx, ENCODE_BATCH);
    const dist = new Float64Array(buf, p.dist, ENCODE_BATCH);
    let multi = 0;
    for (let b = start; b < end; b += ENCODE_BATCH) {
      const n = Math.min(ENCODE_BATCH, end - b);
      xo.set(vectors.subarray(b * d, (b + n) * d));
      multi += e.encodeRows(
        p.xo, n, d, dp, h, wc, wcp, p.cmat, p.rmat, p.ord, p.pad, p.tmp, p.rot, p.xr,
        p.z, p.leadv, p.zt, p.ztRest, p.c, p.perm, k, maxNorm, eta, p.cand, p.pend, p.idx, p.dist,
      );
      outIdx.set(idx.subarray(0, n), b);
      outDist.set(dist.subarray(0, n), b);
    }
    return multi;
  }
}
