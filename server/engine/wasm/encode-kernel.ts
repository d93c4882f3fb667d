import { kernelModule } from './kernel';

interface EncodeExports {
  memory: WebAssembly.Memory;
  encodeRows(
    xoPtr: number, n: number, d: number, dp: number, qtPtr: number, xr: number,
    csPtr: number, leadPtr: number, ztPtr: number, ztRestPtr: number,
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
 * The bound η of encodeRows (assembly/assign-nearest.ts) on ‖ŷ_L − Q_L x‖/‖x‖ for the 8 leading coefficients
 * computed in float32 as Σ_i x_i·Q_L[:, i]: a dot product of d terms errs by at most γ_d·|a|·|b| (N. J. Higham,
 * Accuracy and Stability of Numerical Algorithms, 2nd ed., §3.1), that is γ_d·‖x‖ for a unit row, and the float32
 * rounding of the rows adds at most u·‖x‖ per coefficient; over 8 coefficients √8 times that. Inflated by 10 % and
 * twice the rounding term, plus 1e-12 for the float64 arithmetic of the codewords' coefficients.
 */
export function leadErrorBound(d: number): number {
  return 1.1 * Math.sqrt(LEAD) * (gammaOf(d) + 2 * U32) + 1e-12;
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
  private maxNorm = 0;
  private eta = 0;
  private readonly ptr = { qt: 0, xr: 0, cs: 0, lead: 0, zt: 0, ztRest: 0, c: 0, perm: 0, cand: 0, xo: 0, pend: 0, idx: 0, dist: 0 };

  constructor() {
    this.exports = new WebAssembly.Instance(kernelModule(), {}).exports as unknown as EncodeExports;
  }

  /** Loads a codebook (K × d, row-major, d = width·height·channels); must precede encodeRange. */
  setCodebook(codewords: Float32Array, k: number, shape: BlockShape): void {
    const { width: w, height: h, channels: ch } = shape;
    const wc = w * ch;
    const d = h * wc;
    const dp = align(d, 4);
    const groups = Math.ceil(k / 4);
    Object.assign(this, { k, d, dp, eta: leadErrorBound(d) });
    const p = this.ptr;
    p.qt = 64;
    p.xr = align(p.qt + d * LEAD * 4, 64);
    p.cs = align(p.xr + dp * 4, 64);
    p.lead = align(p.cs + k * dp * 4, 64);
    p.zt = align(p.lead + k * 4, 64);
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

    // The basis Q = C_h ⊗ C_w ⊗ I_channels: coefficient (v, u, chan) has component (r, col, chan) = C_h[v][r]·C_w[u][col].
    const chm = dctMatrix(h);
    const cwm = dctMatrix(w);
    const basis = (coef: number, i: number) => {
      const v = Math.floor(coef / wc);
      const u = Math.floor((coef % wc) / ch);
      const r = Math.floor(i / wc);
      const col = Math.floor((i % wc) / ch);
      return coef % ch === i % ch ? chm[v * h + r] * cwm[u * w + col] : 0;
    };
    // Every codeword's coefficients in float64, by the separable stages.
    const rotated = new Float64Array(k * d);
    const tmp = new Float64Array(d);
    let maxSq = 0;
    for (let j = 0; j < k; j++) {
      const base = j * d;
      let ss = 0;
      for (let i = 0; i < d; i++) ss += codewords[base + i] * codewords[base + i];
      if (ss > maxSq) maxSq = ss;
      tmp.fill(0);
      for (let v = 0; v < h; v++) for (let r = 0; r < h; r++) for (let i = 0; i < wc; i++) tmp[v * wc + i] += chm[v * h + r] * codewords[base + r * wc + i];
      for (let v = 0; v < h; v++) {
        for (let u = 0; u < w; u++) {
          for (let c = 0; c < ch; c++) {
            let s2 = 0;
            for (let col = 0; col < w; col++) s2 += cwm[u * w + col] * tmp[v * wc + col * ch + c];
            rotated[base + v * wc + u * ch + c] = s2;
          }
        }
      }
    }
    this.maxNorm = Math.sqrt(maxSq) * (1 + 1e-12);
    // The leading coefficients: the LEAD of largest variance over the codebook (ties by index), so that their partial
    // distance bounds most of a distance.
    const variance = Array.from({ length: d }, (_, coef) => {
      let s1 = 0;
      let s2 = 0;
      for (let j = 0; j < k; j++) {
        const t = rotated[j * d + coef];
        s1 += t;
        s2 += t * t;
      }
      return { coef, v: s2 / k - (s1 / k) ** 2 };
    });
    const leading = variance.sort((a, b) => b.v - a.v || a.coef - b.coef).slice(0, Math.min(LEAD, d)).map((e) => e.coef);
    const isLeading = new Uint8Array(d);
    for (const coef of leading) isLeading[coef] = 1;
    // Q_L transposed: row i holds component i of each leading basis vector (zero beyond d's coefficients).
    const qt = new Float32Array(buf, p.qt, d * LEAD);
    qt.fill(0);
    for (let i = 0; i < d; i++) leading.forEach((coef, l) => (qt[i * LEAD + l] = basis(coef, i)));
    // Codewords sorted by their first leading coefficient (as float32, what the kernel compares), ties by index.
    const key = Float32Array.from({ length: k }, (_, j) => rotated[j * d + leading[0]]);
    const perm = Uint32Array.from({ length: k }, (_, j) => j).sort((a, b) => key[a] - key[b] || a - b);
    const cs = new Float32Array(buf, p.cs, k * dp);
    const lead = new Float32Array(buf, p.lead, k);
    // Groups of four positions, coefficient-major: group g, coefficient l, lane q & 3.
    const zt = new Float32Array(buf, p.zt, groups * LEAD * 4);
    const ztRest = new Float32Array(buf, p.ztRest, groups * 4);
    cs.fill(0);
    zt.fill(0);
    ztRest.fill(0);
    for (let q = 0; q < k; q++) {
      const j = perm[q];
      cs.set(codewords.subarray(j * d, j * d + d), q * dp);
      lead[q] = key[j];
      leading.forEach((coef, l) => (zt[(q >> 2) * LEAD * 4 + l * 4 + (q & 3)] = rotated[j * d + coef]));
      let rs = 0;
      for (let coef = 0; coef < d; coef++) if (!isLeading[coef]) rs += rotated[j * d + coef] ** 2;
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
    const { d, dp, k, maxNorm, eta, ptr: p } = this;
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
        p.xo, n, d, dp, p.qt, p.xr, p.cs, p.lead, p.zt, p.ztRest, p.c, p.perm, k, maxNorm, eta,
        p.cand, p.pend, p.idx, p.dist,
      );
      outIdx.set(idx.subarray(0, n), b);
      outDist.set(dist.subarray(0, n), b);
    }
    return multi;
  }
}
