// AssemblyScript source of the nearest-codeword kernel (compiled by ../build.mjs into
// assign-nearest.wasm and its embedded copy nearest-kernel-binary.ts).
//
// All pointers are byte offsets into this module's own linear memory; the JavaScript side
// lays out the buffers and trusts nothing it did not write itself.
//
// Layouts:
//   x      n × dp f32, row-major, each row zero-padded from d to dp (dp = d rounded up to 4)
//   x      (as above) holds x − μ, the vectors shifted by the codebook mean μ: distances do
//          not change, and the smaller norms tighten the float32 error bound
//   xo     n × d f32, the same vectors unshifted, for exact distances
//   ct     shifted codewords c − μ, zero-padded to kp (a multiple of 16), in blocks of 16
//          codewords: block b holds dp rows of 16 f32 (component i of codewords 16b..16b+15),
//          so a scan reads memory strictly in sequence
//   cn     kp f32, ‖c_j − μ‖² rounded to f32; padding columns hold +Infinity so they never win
//   c      k × d f32, row-major codewords (unshifted), for exact distances
//   band   kp f32 scratch for the re-decision
//   state  n × 48 bytes: per-lane best value, second-best value (f32x4) and best index (i32x4)
//   idx    n u32 output, dist n f64 output
//   lower  n f64 output: a lower bound on the squared distance to every other codeword

const U32: f64 = 5.9604644775390625e-8; // 2^-24, unit roundoff of float32
const U64: f64 = 1.1102230246251565e-16; // 2^-53, unit roundoff of float64

/**
 * Fills x (n × dp, shifted and zero-padded) from xo (n × d, as given): x = f32(xo − μ),
 * the difference taken in float64 and rounded once. shift: d f64 values of μ.
 */
export function prepareRows(xoPtr: usize, xPtr: usize, n: i32, d: i32, dp: i32, shiftPtr: usize): void {
  for (let v = 0; v < n; v++) {
    const src = xoPtr + <usize>v * <usize>d * 4;
    const dst = xPtr + <usize>v * <usize>dp * 4;
    for (let i = 0; i < d; i++) {
      store<f32>(dst + <usize>i * 4, <f32>(<f64>load<f32>(src + <usize>i * 4) - load<f64>(shiftPtr + <usize>i * 8)));
    }
    for (let i = d; i < dp; i++) store<f32>(dst + <usize>i * 4, 0);
  }
}

/** Resets the running minima of n vectors before the first codeword tile. */
export function resetState(statePtr: usize, n: i32): void {
  const inf = f32x4.splat(<f32>Infinity);
  const zero = i32x4.splat(0);
  for (let v = 0; v < n; v++) {
    const st = statePtr + <usize>v * 48;
    v128.store(st, inf);
    v128.store(st, inf, 16);
    v128.store(st, zero, 32);
  }
}

/**
 * Scans codewords [jStart, jEnd) (multiples of 16) for n vectors with the expansion
 * ‖c‖² − 2x·c (‖x‖² is the same for every codeword of one vector, so it is left out).
 * Two vectors share every codeword load (register blocking 2 × 16); each lane sums its dp
 * products in component order, a chain of dp + 1 float32 roundings that finishRows bounds.
 */
export function scanTile(
  xPtr: usize, n: i32, dp: i32, ctPtr: usize, cnPtr: usize, kp: i32,
  statePtr: usize, jStart: i32, jEnd: i32,
): void {
  const blockBytes = <usize>dp * 64;
  const iota = i32x4(0, 1, 2, 3);
  for (let v = 0; v < n; v += 2) {
    const x0 = xPtr + <usize>v * <usize>dp * 4;
    const x1 = v + 1 < n ? x0 + <usize>dp * 4 : x0;
    const st0 = statePtr + <usize>v * 48;
    const st1 = v + 1 < n ? st0 + 48 : st0;
    let m10 = v128.load(st0), m20 = v128.load(st0, 16), bi0 = v128.load(st0, 32);
    let m11 = v128.load(st1), m21 = v128.load(st1, 16), bi1 = v128.load(st1, 32);
    for (let j0 = jStart; j0 < jEnd; j0 += 16) {
      let a0 = f32x4.splat(0), a1 = f32x4.splat(0), a2 = f32x4.splat(0), a3 = f32x4.splat(0);
      let b0 = f32x4.splat(0), b1 = f32x4.splat(0), b2 = f32x4.splat(0), b3 = f32x4.splat(0);
      let cp = ctPtr + <usize>(j0 >> 4) * blockBytes;
      let o: usize = 0;
      const oEnd = <usize>dp * 4;
      while (o < oEnd) {
        const p = v128.load32_splat(x0 + o);
        const q = v128.load32_splat(x1 + o);
        const c0 = v128.load(cp), c1 = v128.load(cp, 16), c2 = v128.load(cp, 32), c3 = v128.load(cp, 48);
        a0 = f32x4.add(a0, f32x4.mul(p, c0));
        a1 = f32x4.add(a1, f32x4.mul(p, c1));
        a2 = f32x4.add(a2, f32x4.mul(p, c2));
        a3 = f32x4.add(a3, f32x4.mul(p, c3));
        b0 = f32x4.add(b0, f32x4.mul(q, c0));
        b1 = f32x4.add(b1, f32x4.mul(q, c1));
        b2 = f32x4.add(b2, f32x4.mul(q, c2));
        b3 = f32x4.add(b3, f32x4.mul(q, c3));
        cp += 64;
        o += 4;
      }
      // pmin/pmax (one instruction each, unlike the NaN-propagating min/max): values here
      // are never NaN because finishRows sends every vector whose norms could overflow
      // float32 to the exact search.
      const cnp = cnPtr + <usize>j0 * 4;
      const n0 = v128.load(cnp), n1 = v128.load(cnp, 16), n2 = v128.load(cnp, 32), n3 = v128.load(cnp, 48);
      const i0 = i32x4.add(i32x4.splat(j0), iota);
      const i1 = i32x4.add(i32x4.splat(j0 + 4), iota);
      const i2 = i32x4.add(i32x4.splat(j0 + 8), iota);
      const i3 = i32x4.add(i32x4.splat(j0 + 12), iota);
      let val = f32x4.sub(n0, f32x4.add(a0, a0));
      m20 = f32x4.pmin(m20, f32x4.pmax(m10, val)); bi0 = v128.bitselect(i0, bi0, f32x4.lt(val, m10)); m10 = f32x4.pmin(m10, val);
      val = f32x4.sub(n1, f32x4.add(a1, a1));
      m20 = f32x4.pmin(m20, f32x4.pmax(m10, val)); bi0 = v128.bitselect(i1, bi0, f32x4.lt(val, m10)); m10 = f32x4.pmin(m10, val);
      val = f32x4.sub(n2, f32x4.add(a2, a2));
      m20 = f32x4.pmin(m20, f32x4.pmax(m10, val)); bi0 = v128.bitselect(i2, bi0, f32x4.lt(val, m10)); m10 = f32x4.pmin(m10, val);
      val = f32x4.sub(n3, f32x4.add(a3, a3));
      m20 = f32x4.pmin(m20, f32x4.pmax(m10, val)); bi0 = v128.bitselect(i3, bi0, f32x4.lt(val, m10)); m10 = f32x4.pmin(m10, val);
      val = f32x4.sub(n0, f32x4.add(b0, b0));
      m21 = f32x4.pmin(m21, f32x4.pmax(m11, val)); bi1 = v128.bitselect(i0, bi1, f32x4.lt(val, m11)); m11 = f32x4.pmin(m11, val);
      val = f32x4.sub(n1, f32x4.add(b1, b1));
      m21 = f32x4.pmin(m21, f32x4.pmax(m11, val)); bi1 = v128.bitselect(i1, bi1, f32x4.lt(val, m11)); m11 = f32x4.pmin(m11, val);
      val = f32x4.sub(n2, f32x4.add(b2, b2));
      m21 = f32x4.pmin(m21, f32x4.pmax(m11, val)); bi1 = v128.bitselect(i2, bi1, f32x4.lt(val, m11)); m11 = f32x4.pmin(m11, val);
      val = f32x4.sub(n3, f32x4.add(b3, b3));
      m21 = f32x4.pmin(m21, f32x4.pmax(m11, val)); bi1 = v128.bitselect(i3, bi1, f32x4.lt(val, m11)); m11 = f32x4.pmin(m11, val);
    }
    v128.store(st0, m10); v128.store(st0, m20, 16); v128.store(st0, bi0, 32);
    if (v + 1 < n) { v128.store(st1, m11); v128.store(st1, m21, 16); v128.store(st1, bi1, 32); }
  }
}

/** Exact squared distance: Σ (x_i − c_i)² over i = 0..d−1 in this order, float64. */
function exactDistance(x: usize, c: usize, d: i32): f64 {
  let s: f64 = 0;
  for (let i = 0; i < d; i++) {
    const t = <f64>load<f32>(x + <usize>i * 4) - <f64>load<f32>(c + <usize>i * 4);
    s += t * t;
  }
  return s;
}

/**
 * Expanded values of one vector against every codeword into band[0..kp) (same float32
 * summation order as scanTile, so the same error bound holds).
 */
function scanOne(x: usize, dp: i32, ctPtr: usize, cnPtr: usize, kp: i32, band: usize): void {
  const blockBytes = <usize>dp * 64;
  for (let j0 = 0; j0 < kp; j0 += 16) {
    let a0 = f32x4.splat(0), a1 = f32x4.splat(0), a2 = f32x4.splat(0), a3 = f32x4.splat(0);
    let cp = ctPtr + <usize>(j0 >> 4) * blockBytes;
    for (let o: usize = 0; o < <usize>dp * 4; o += 4) {
      const p = v128.load32_splat(x + o);
      a0 = f32x4.add(a0, f32x4.mul(p, v128.load(cp)));
      a1 = f32x4.add(a1, f32x4.mul(p, v128.load(cp, 16)));
      a2 = f32x4.add(a2, f32x4.mul(p, v128.load(cp, 32)));
      a3 = f32x4.add(a3, f32x4.mul(p, v128.load(cp, 48)));
      cp += 64;
    }
    const cnp = cnPtr + <usize>j0 * 4;
    const out = band + <usize>j0 * 4;
    v128.store(out, f32x4.sub(v128.load(cnp), f32x4.add(a0, a0)));
    v128.store(out, f32x4.sub(v128.load(cnp, 16), f32x4.add(a1, a1)), 16);
    v128.store(out, f32x4.sub(v128.load(cnp, 32), f32x4.add(a2, a2)), 32);
    v128.store(out, f32x4.sub(v128.load(cnp, 48), f32x4.add(a3, a3)), 48);
  }
}

/**
 * Picks each vector's codeword from the scanned state and writes its exact distance.
 * When the runner-up is within the proven error bound of the expansion (or the values
 * are not finite), the vector is re-decided: every codeword whose expanded value lies
 * within 2E of the smallest is compared by exact float64 distance, lowest index first on
 * equal distances; no codeword outside that band can be nearer. Returns how many were
 * re-decided.
 *
 * Bound: with u = 2^-24, chains of at most dp + 2 roundings (γ = mu/(1 − mu), m = dp + 2),
 * x' = x − μ, c' = c − μ and M = max ‖c'_j‖, every expanded value is within
 * E = (2γ + 3u)‖x'‖M + 3uM² + 3u(‖x'‖ + M)² of ‖x − c_j‖² − ‖x'‖²; the last term covers
 * the float32 rounding of the shifted copies. A gap above 2E, plus the float64 rounding of
 * the exact sums, cannot reorder two codewords.
 */
export function finishRows(
  xPtr: usize, xoPtr: usize, n: i32, d: i32, dp: i32, ctPtr: usize, cnPtr: usize, kp: i32,
  cPtr: usize, k: i32, maxNorm: f64, bandPtr: usize,
  statePtr: usize, idxPtr: usize, distPtr: usize, lowerPtr: usize,
): i32 {
  const m = <f64>(dp + 2);
  const gamma = (m * U32) / (1 - m * U32);
  const gamma64 = (<f64>(d + 2) * U64) / (1 - <f64>(d + 2) * U64);
  let redecided = 0;
  for (let v = 0; v < n; v++) {
    const x = xPtr + <usize>v * <usize>dp * 4;
    const xo = xoPtr + <usize>v * <usize>d * 4;
    const st = statePtr + <usize>v * 48;
    // Reduce the four lanes: best value and its index, then the smallest other value.
    let best = <f64>load<f32>(st);
    let bidx = load<i32>(st, 32);
    let bl = 0;
    for (let l = 1; l < 4; l++) {
      const val = <f64>load<f32>(st + <usize>l * 4);
      const li = load<i32>(st + 32 + <usize>l * 4);
      if (val < best || (val == best && li < bidx)) { best = val; bidx = li; bl = l; }
    }
    let second: f64 = Infinity;
    for (let l = 0; l < 4; l++) {
      const val = <f64>load<f32>(st + <usize>l * 4);
      if (l != bl && val < second) second = val;
      const v2 = <f64>load<f32>(st + 16 + <usize>l * 4);
      if (v2 < second) second = v2;
    }
    let xn: f64 = 0;
    for (let i = 0; i < dp; i++) {
      const t = <f64>load<f32>(x + <usize>i * 4);
      xn += t * t;
    }
    const xn2 = xn;
    xn = Math.sqrt(xn);
    const e = (2 * gamma + 3 * U32) * xn * maxNorm + 3 * U32 * maxNorm * maxNorm
      + 3 * U32 * (xn + maxNorm) * (xn + maxNorm);
    let dist = exactDistance(xo, cPtr + <usize>bidx * <usize>d * 4, d);
    // Every other codeword's expanded value is at least second − e, so its squared distance
    // is at least that plus ‖x'‖² (the factor covers the float64 rounding of ‖x'‖²).
    let lower = (second - e + xn2) * (1 - 1e-12);
    const gap = second - best;
    // Norms large enough to overflow float32 (or NaN) always take the exact path.
    const safe = (xn + maxNorm) * (xn + maxNorm) < 1e37;
    if (!safe || !(gap > 2 * e + 3 * gamma64 * (dist + xn2) + 1e-300)) {
      redecided++;
      scanOne(x, dp, ctPtr, cnPtr, kp, bandPtr);
      let floor: f64 = Infinity;
      let finite = true;
      for (let j = 0; j < k; j++) {
        const val = <f64>load<f32>(bandPtr + <usize>j * 4);
        if (!(val < Infinity)) finite = false;
        if (val < floor) floor = val;
      }
      // The band is widened by the float64 slack too; without safe values, search all.
      if (!safe) finite = false;
      const limit = finite ? floor + 2 * e + 3 * gamma64 * (dist + xn2) + 1e-300 : Infinity;
      let bd: f64 = Infinity;
      let sd: f64 = Infinity;
      let outside: f64 = Infinity;
      let bj = 0;
      for (let j = 0; j < k; j++) {
        const val = <f64>load<f32>(bandPtr + <usize>j * 4);
        if (finite && val > limit) {
          if (val < outside) outside = val;
          continue;
        }
        const dj = exactDistance(xo, cPtr + <usize>j * <usize>d * 4, d);
        if (dj < bd) { sd = bd; bd = dj; bj = j; } else if (dj < sd) { sd = dj; }
      }
      bidx = bj;
      dist = bd;
      const outsideLower = (outside - e + xn2) * (1 - 1e-12);
      lower = Math.min(sd * (1 - 1e-12), outsideLower);
    }
    if (!(lower > 0)) lower = 0;
    store<f64>(lowerPtr + <usize>v * 8, lower);
    store<u32>(idxPtr + <usize>v * 4, <u32>bidx);
    store<f64>(distPtr + <usize>v * 8, dist);
  }
  return redecided;
}
