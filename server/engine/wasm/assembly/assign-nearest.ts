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
//   perm   k u32: the codeword held at each position of ct and cn (positions group codewords
//          that lie close together, which tightens the block bounds)
//   ct     shifted codewords c − μ at their positions, zero-padded to kp (a multiple of 16),
//          in blocks of 16: block b holds dp rows of 16 f32 (component i of positions
//          16b..16b+15), so a scan reads memory strictly in sequence
//   cn     kp f32, ‖c − μ‖² by position, rounded to f32; padding holds +Infinity so it never wins
//   c      k × d f32, row-major codewords (unshifted), for exact distances
//   band   kp f32 scratch for the re-decision
//   state  n × 48 bytes: per-lane best value, second-best value (f32x4) and best index (i32x4)
//   idx    n u32 output, dist n f64 output
//   lower  n f64 output: a lower bound on the squared distance to every other codeword of
//          the scanned blocks (the caller folds in the bounds of the skipped ones)
//   lists  for each 16-codeword block g, the vectors (batch positions, i32) that scan it:
//          lists + g × stride × 4, count[g] entries
//   bmin   n × g f32: per vector and block, the smallest expanded value of the block;
//          +Infinity marks a block the vector did not scan
//   blow   n × gg f32 in/out: per vector and group, a lower bound on the distance (not
//          squared) to every codeword of the group; rewritten for the scanned groups. A
//          group is 2^gshift consecutive blocks (gg = ⌈g / 2^gshift⌉; the last may be
//          shorter), so large codebooks keep one bound per group instead of per block

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
    // Two components at a time in f64x2: promotion, subtraction and demotion round per
    // lane exactly as the scalar casts do.
    let i = 0;
    for (; i + 2 <= d; i += 2) {
      const x = f64x2.promote_low_f32x4(v128.load64_zero(src + <usize>i * 4));
      const r = f32x4.demote_f64x2_zero(f64x2.sub(x, v128.load(shiftPtr + <usize>i * 8)));
      v128.store64_lane(dst + <usize>i * 4, r, 0);
    }
    for (; i < d; i++) {
      store<f32>(dst + <usize>i * 4, <f32>(<f64>load<f32>(src + <usize>i * 4) - load<f64>(shiftPtr + <usize>i * 8)));
    }
    for (let i = d; i < dp; i++) store<f32>(dst + <usize>i * 4, 0);
  }
}

/** Resets the running minima of n vectors and marks their g blocks as not scanned. */
export function resetState(statePtr: usize, n: i32, bminPtr: usize, g: i32): void {
  const inf = f32x4.splat(<f32>Infinity);
  const zero = i32x4.splat(0);
  for (let v = 0; v < n; v++) {
    const st = statePtr + <usize>v * 48;
    v128.store(st, inf);
    v128.store(st, inf, 16);
    v128.store(st, zero, 32);
  }
  const total = <usize>n * <usize>g;
  for (let i: usize = 0; i < total; i++) store<f32>(bminPtr + i * 4, <f32>Infinity);
}

/**
 * Folds the expanded values ‖c‖² − 2x·c of 4 codewords (indices ids) into a vector's
 * running best value, second-best value and best index (per lane); returns the values.
 */
// @ts-ignore: decorator
@inline
function fold(st: usize, cn: v128, acc: v128, ids: v128): v128 {
  // pmin/pmax (one instruction each, unlike the NaN-propagating min/max): values here
  // are never NaN because finishRows sends every vector whose norms could overflow
  // float32 to the exact search.
  const val = f32x4.sub(cn, f32x4.add(acc, acc));
  const m1 = v128.load(st);
  v128.store(st, f32x4.pmin(v128.load(st, 16), f32x4.pmax(m1, val)), 16);
  v128.store(st, v128.bitselect(ids, v128.load(st, 32), f32x4.lt(val, m1)), 32);
  v128.store(st, f32x4.pmin(m1, val));
  return val;
}

/** Smallest of four per-lane minima: the block minimum recorded for the block bounds. */
// @ts-ignore: decorator
@inline
function blockMin(a: v128, b: v128, c: v128, d: v128): f32 {
  const m = f32x4.pmin(f32x4.pmin(a, b), f32x4.pmin(c, d));
  return min(min(f32x4.extract_lane(m, 0), f32x4.extract_lane(m, 1)), min(f32x4.extract_lane(m, 2), f32x4.extract_lane(m, 3)));
}

/**
 * Scans, for every 16-codeword block, the vectors listed for it, with the expansion
 * ‖c‖² − 2x·c (‖x‖² is the same for every codeword of one vector, so it is left out).
 * Blocks outside and vectors inside: one block (dp × 64 bytes) stays in the L1 cache while
 * its vectors stream past, and the running minima live in memory between blocks, leaving
 * the registers to the inner loop. Two vectors share every codeword load (register
 * blocking 2 × 16); each lane sums its dp products in component order, a chain of dp + 1
 * float32 roundings that finishRows bounds. A lane's value depends only on its vector and
 * codeword, never on which vector it was paired with.
 */
export function scanBlocks(
  xPtr: usize, dp: i32, ctPtr: usize, cnPtr: usize, statePtr: usize,
  g: i32, listPtr: usize, listStride: i32, countPtr: usize, bminPtr: usize,
): void {
  const blockBytes = <usize>dp * 64;
  const rowBytes = <usize>dp * 4;
  const iota = i32x4(0, 1, 2, 3);
  for (let b = 0; b < g; b++) {
    const cb = ctPtr + <usize>b * blockBytes;
    const cnp = cnPtr + <usize>b * 64;
    const i0 = i32x4.add(i32x4.splat(b << 4), iota);
    const i1 = i32x4.add(i0, i32x4.splat(4));
    const i2 = i32x4.add(i0, i32x4.splat(8));
    const i3 = i32x4.add(i0, i32x4.splat(12));
    const list = listPtr + <usize>b * <usize>listStride * 4;
    const count = load<i32>(countPtr + <usize>b * 4);
    for (let p = 0; p < count; p += 2) {
      const v0 = load<i32>(list + <usize>p * 4);
      // An odd last vector is paired with itself; only its own state is written.
      const v1 = p + 1 < count ? load<i32>(list + <usize>p * 4, 4) : v0;
      const x0 = xPtr + <usize>v0 * rowBytes;
      const x1 = xPtr + <usize>v1 * rowBytes;
      let a0 = f32x4.splat(0), a1 = f32x4.splat(0), a2 = f32x4.splat(0), a3 = f32x4.splat(0);
      let b0 = f32x4.splat(0), b1 = f32x4.splat(0), b2 = f32x4.splat(0), b3 = f32x4.splat(0);
      let cp = cb;
      let o: usize = 0;
      while (o < rowBytes) {
        const p0 = v128.load32_splat(x0 + o);
        const q0 = v128.load32_splat(x1 + o);
        const c0 = v128.load(cp), c1 = v128.load(cp, 16), c2 = v128.load(cp, 32), c3 = v128.load(cp, 48);
        a0 = f32x4.add(a0, f32x4.mul(p0, c0));
        a1 = f32x4.add(a1, f32x4.mul(p0, c1));
        a2 = f32x4.add(a2, f32x4.mul(p0, c2));
        a3 = f32x4.add(a3, f32x4.mul(p0, c3));
        b0 = f32x4.add(b0, f32x4.mul(q0, c0));
        b1 = f32x4.add(b1, f32x4.mul(q0, c1));
        b2 = f32x4.add(b2, f32x4.mul(q0, c2));
        b3 = f32x4.add(b3, f32x4.mul(q0, c3));
        cp += 64;
        o += 4;
      }
      const n0 = v128.load(cnp), n1 = v128.load(cnp, 16), n2 = v128.load(cnp, 32), n3 = v128.load(cnp, 48);
      const st0 = statePtr + <usize>v0 * 48;
      const w0 = fold(st0, n0, a0, i0);
      const w1 = fold(st0, n1, a1, i1);
      const w2 = fold(st0, n2, a2, i2);
      const w3 = fold(st0, n3, a3, i3);
      store<f32>(bminPtr + (<usize>v0 * <usize>g + <usize>b) * 4, blockMin(w0, w1, w2, w3));
      if (v1 != v0) {
        const st1 = statePtr + <usize>v1 * 48;
        const z0 = fold(st1, n0, b0, i0);
        const z1 = fold(st1, n1, b1, i1);
        const z2 = fold(st1, n2, b2, i2);
        const z3 = fold(st1, n3, b3, i3);
        store<f32>(bminPtr + (<usize>v1 * <usize>g + <usize>b) * 4, blockMin(z0, z1, z2, z3));
      }
    }
  }
}

/**
 * Chooses the blocks each of n vectors scans in a bounded pass. Vector v (batch position,
 * unshifted copy in xo) has current codeword cur[v], in group own[v]; blow holds its group
 * bounds from the previous pass and moved (gg f64) each group's largest move. With u its
 * exact distance to cur[v] (rounded up), a group other than own[v] whose lowered bound
 * exceeds u holds only codewords farther than the current one: it is skipped and its
 * bound kept, lowered (the float32 step down covers the rounding); every block of every
 * other group is listed for the scan. skippedMin[v] receives the smallest bound of the
 * skipped groups (+Infinity when none), curDist[v] the exact squared distance to cur[v]
 * (exactDistance's bits). With full set (no bounds yet) every block is listed.
 * Returns how many vectors scan only their own group.
 */
export function planBlocks(
  n: i32, d: i32, g: i32, gshift: i32, full: bool, xoPtr: usize, cPtr: usize, blowPtr: usize, movedPtr: usize,
  curPtr: usize, ownPtr: usize, upperPtr: usize, curDistPtr: usize,
  listPtr: usize, listStride: i32, countPtr: usize, skippedMinPtr: usize,
): i32 {
  for (let b = 0; b < g; b++) store<i32>(countPtr + <usize>b * 4, 0);
  if (full) {
    for (let v = 0; v < n; v++) {
      for (let b = 0; b < g; b++) {
        const c = load<i32>(countPtr + <usize>b * 4);
        store<i32>(listPtr + (<usize>b * <usize>listStride + <usize>c) * 4, v);
        store<i32>(countPtr + <usize>b * 4, c + 1);
      }
      store<f64>(skippedMinPtr + <usize>v * 8, Infinity);
    }
    return 0;
  }
  // Exact distances to the current codewords, four vectors at a time (independent chains,
  // each in component order).
  const rowBytes = <usize>d * 4;
  for (let v = 0; v < n; v += 4) {
    const v1 = min(v + 1, n - 1), v2 = min(v + 2, n - 1), v3 = min(v + 3, n - 1);
    const x0 = xoPtr + <usize>v * rowBytes, x1 = xoPtr + <usize>v1 * rowBytes;
    const x2 = xoPtr + <usize>v2 * rowBytes, x3 = xoPtr + <usize>v3 * rowBytes;
    const c0 = cPtr + <usize>load<i32>(curPtr + <usize>v * 4) * rowBytes;
    const c1 = cPtr + <usize>load<i32>(curPtr + <usize>v1 * 4) * rowBytes;
    const c2 = cPtr + <usize>load<i32>(curPtr + <usize>v2 * 4) * rowBytes;
    const c3 = cPtr + <usize>load<i32>(curPtr + <usize>v3 * 4) * rowBytes;
    let s0: f64 = 0, s1: f64 = 0, s2: f64 = 0, s3: f64 = 0;
    for (let o: usize = 0; o < rowBytes; o += 4) {
      const t0 = <f64>load<f32>(x0 + o) - <f64>load<f32>(c0 + o);
      const t1 = <f64>load<f32>(x1 + o) - <f64>load<f32>(c1 + o);
      const t2 = <f64>load<f32>(x2 + o) - <f64>load<f32>(c2 + o);
      const t3 = <f64>load<f32>(x3 + o) - <f64>load<f32>(c3 + o);
      s0 += t0 * t0;
      s1 += t1 * t1;
      s2 += t2 * t2;
      s3 += t3 * t3;
    }
    store<f64>(curDistPtr + <usize>v * 8, s0);
    store<f64>(curDistPtr + <usize>v1 * 8, s1);
    store<f64>(curDistPtr + <usize>v2 * 8, s2);
    store<f64>(curDistPtr + <usize>v3 * 8, s3);
    store<f64>(upperPtr + <usize>v * 8, Math.sqrt(s0) * (1 + 1e-12));
    store<f64>(upperPtr + <usize>v1 * 8, Math.sqrt(s1) * (1 + 1e-12));
    store<f64>(upperPtr + <usize>v2 * 8, Math.sqrt(s2) * (1 + 1e-12));
    store<f64>(upperPtr + <usize>v3 * 8, Math.sqrt(s3) * (1 + 1e-12));
  }
  let pruned = 0;
  const gg = (g + (1 << gshift) - 1) >> gshift;
  for (let v = 0; v < n; v++) {
    const row = blowPtr + <usize>v * <usize>gg * 4;
    let minSkipped: f64 = Infinity;
    const u = load<f64>(upperPtr + <usize>v * 8);
    const own = load<i32>(ownPtr + <usize>v * 4);
    let listed = 0;
    for (let q = 0; q < gg; q++) {
      const bound = (<f64>load<f32>(row + <usize>q * 4) - load<f64>(movedPtr + <usize>q * 8)) * (1 - 1e-12);
      if (q != own && u < bound) {
        store<f32>(row + <usize>q * 4, <f32>(bound * (1 - 1e-6)));
        if (bound < minSkipped) minSkipped = bound;
      } else {
        const last = min(g, (q + 1) << gshift);
        for (let b = q << gshift; b < last; b++) {
          const c = load<i32>(countPtr + <usize>b * 4);
          store<i32>(listPtr + (<usize>b * <usize>listStride + <usize>c) * 4, v);
          store<i32>(countPtr + <usize>b * 4, c + 1);
        }
        listed++;
      }
    }
    if (listed == 1) pruned++;
    store<f64>(skippedMinPtr + <usize>v * 8, minSkipped);
  }
  return pruned;
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
 * summation order as scanBlocks, so the same error bound holds).
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
  g: i32, gshift: i32, bminPtr: usize, blowPtr: usize, permPtr: usize,
  haveCur: bool, curPtr: usize, curDistPtr: usize, pendingPtr: usize,
): i32 {
  const m = <f64>(dp + 2);
  const gamma = (m * U32) / (1 - m * U32);
  const gamma64 = (<f64>(d + 2) * U64) / (1 - <f64>(d + 2) * U64);
  let redecided = 0;
  // First every vector's best position and runner-up; the lanes are read before the
  // state's first 16 bytes are reused for the two f64 values.
  for (let v = 0; v < n; v++) {
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
    store<f64>(st, best);
    store<f64>(st, second, 8);
    // The scan works on positions; from here on the index is the codeword's own.
    store<i32>(idxPtr + <usize>v * 4, load<i32>(permPtr + <usize>bidx * 4));
  }
  // Exact distances to the chosen codewords. A vector that keeps its codeword already has
  // it from planBlocks (the same sum in the same order); the others are listed in pending
  // and summed four at a time: each sum still runs over i = 0..d−1 in order (the bits of
  // exactDistance), and the four independent chains keep the float64 adder busy instead
  // of waiting on one chain's latency.
  let pending = 0;
  for (let v = 0; v < n; v++) {
    if (haveCur && load<i32>(idxPtr + <usize>v * 4) == load<i32>(curPtr + <usize>v * 4)) {
      store<f64>(distPtr + <usize>v * 8, load<f64>(curDistPtr + <usize>v * 8));
    } else {
      store<i32>(pendingPtr + <usize>pending * 4, v);
      pending++;
    }
  }
  const rowBytes = <usize>d * 4;
  for (let p = 0; p < pending; p += 4) {
    const v0 = load<i32>(pendingPtr + <usize>p * 4);
    const v1 = load<i32>(pendingPtr + <usize>min(p + 1, pending - 1) * 4);
    const v2 = load<i32>(pendingPtr + <usize>min(p + 2, pending - 1) * 4);
    const v3 = load<i32>(pendingPtr + <usize>min(p + 3, pending - 1) * 4);
    const x0 = xoPtr + <usize>v0 * rowBytes, x1 = xoPtr + <usize>v1 * rowBytes;
    const x2 = xoPtr + <usize>v2 * rowBytes, x3 = xoPtr + <usize>v3 * rowBytes;
    const c0 = cPtr + <usize>load<i32>(idxPtr + <usize>v0 * 4) * rowBytes;
    const c1 = cPtr + <usize>load<i32>(idxPtr + <usize>v1 * 4) * rowBytes;
    const c2 = cPtr + <usize>load<i32>(idxPtr + <usize>v2 * 4) * rowBytes;
    const c3 = cPtr + <usize>load<i32>(idxPtr + <usize>v3 * 4) * rowBytes;
    let s0: f64 = 0, s1: f64 = 0, s2: f64 = 0, s3: f64 = 0;
    for (let o: usize = 0; o < rowBytes; o += 4) {
      const t0 = <f64>load<f32>(x0 + o) - <f64>load<f32>(c0 + o);
      const t1 = <f64>load<f32>(x1 + o) - <f64>load<f32>(c1 + o);
      const t2 = <f64>load<f32>(x2 + o) - <f64>load<f32>(c2 + o);
      const t3 = <f64>load<f32>(x3 + o) - <f64>load<f32>(c3 + o);
      s0 += t0 * t0;
      s1 += t1 * t1;
      s2 += t2 * t2;
      s3 += t3 * t3;
    }
    // Slots past the end repeat the last vector; writing its value again is harmless.
    store<f64>(distPtr + <usize>v0 * 8, s0);
    store<f64>(distPtr + <usize>v1 * 8, s1);
    store<f64>(distPtr + <usize>v2 * 8, s2);
    store<f64>(distPtr + <usize>v3 * 8, s3);
  }
  for (let v = 0; v < n; v++) {
    const x = xPtr + <usize>v * <usize>dp * 4;
    const xo = xoPtr + <usize>v * <usize>d * 4;
    const st = statePtr + <usize>v * 48;
    const best = load<f64>(st);
    const second = load<f64>(st, 8);
    let bidx = load<i32>(idxPtr + <usize>v * 4);
    // ‖x'‖² only enters the bounds, so its order is free: four partial sums (dp is a
    // multiple of 4); the relative factors on the bounds cover its rounding.
    let q0: f64 = 0, q1: f64 = 0, q2: f64 = 0, q3: f64 = 0;
    for (let i = 0; i < dp; i += 4) {
      const t0 = <f64>load<f32>(x + <usize>i * 4), t1 = <f64>load<f32>(x + <usize>i * 4, 4);
      const t2 = <f64>load<f32>(x + <usize>i * 4, 8), t3 = <f64>load<f32>(x + <usize>i * 4, 12);
      q0 += t0 * t0;
      q1 += t1 * t1;
      q2 += t2 * t2;
      q3 += t3 * t3;
    }
    let xn = (q0 + q1) + (q2 + q3);
    const xn2 = xn;
    xn = Math.sqrt(xn);
    const e = (2 * gamma + 3 * U32) * xn * maxNorm + 3 * U32 * maxNorm * maxNorm
      + 3 * U32 * (xn + maxNorm) * (xn + maxNorm);
    let dist = load<f64>(distPtr + <usize>v * 8);
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
      for (let p = 0; p < k; p++) {
        const val = <f64>load<f32>(bandPtr + <usize>p * 4);
        if (finite && val > limit) {
          if (val < outside) outside = val;
          continue;
        }
        const j = load<i32>(permPtr + <usize>p * 4);
        const dj = exactDistance(xo, cPtr + <usize>j * <usize>d * 4, d);
        // Positions are not in index order, so equal distances compare the indices.
        if (dj < bd || (dj == bd && j < bj)) { sd = bd; bd = dj; bj = j; } else if (dj < sd) { sd = dj; }
      }
      bidx = bj;
      dist = bd;
      const outsideLower = (outside - e + xn2) * (1 - 1e-12);
      lower = Math.min(sd * (1 - 1e-12), outsideLower);
    }
    if (!(lower > 0)) lower = 0;
    // Group bounds of the scanned groups: every codeword of group q has an expanded value
    // of at least bmin − e, bmin the smallest of its blocks' minima (a group is scanned
    // whole or not at all), so its distance is at least the square root of that plus
    // ‖x'‖². Stored in float32 after a relative step down larger than its rounding, so
    // the stored bound never exceeds the proven one. Unsafe vectors keep no bounds.
    const brow = <usize>v * <usize>g * 4;
    const gg = (g + (1 << gshift) - 1) >> gshift;
    const grow = <usize>v * <usize>gg * 4;
    for (let q = 0; q < gg; q++) {
      const last = min(g, (q + 1) << gshift);
      let bm: f64 = Infinity;
      for (let b = q << gshift; b < last; b++) {
        const m = <f64>load<f32>(bminPtr + brow + <usize>b * 4);
        if (m < bm) bm = m;
      }
      if (!safe) {
        store<f32>(blowPtr + grow + <usize>q * 4, 0);
      } else if (bm < Infinity) {
        const sq = (bm - e + xn2) * (1 - 1e-12);
        store<f32>(blowPtr + grow + <usize>q * 4, sq > 0 ? <f32>(Math.sqrt(sq) * (1 - 1e-6)) : 0);
      }
    }
    store<f64>(lowerPtr + <usize>v * 8, lower);
    store<u32>(idxPtr + <usize>v * 4, <u32>bidx);
    store<f64>(distPtr + <usize>v * 8, dist);
  }
  return redecided;
}


// ===========================================================================================
// Encoding search: one pass over an image's blocks, nothing kept between passes. Separate
// from the training kernel above (it shares no function with it), so either can change alone.
//
// The block's basis Q = C_h ⊗ C_w ⊗ I_channels (the orthonormal two-dimensional DCT-II)
// concentrates a natural image block's energy in a few coefficients (common practice in
// transform coding). The caller picks the 8 coefficients of largest variance over the codebook
// (L; the rest T) and sorts the codewords by the first of them. For a vector, ŷ_L = Q_L x is
// computed (8 dot products), then the codewords are visited outward from the vector's place in
// that order, four at a time, with a lower bound on the distance from the 8 coefficients and
// the norm of the rest; those that pass get their float32 distance in the pixel domain, and the
// few finalists their exact distance.
//
// Layouts (byte offsets into linear memory):
//   xo     n × d f32, the block vectors as given (component order of io/patches.ts)
//   qt     d × 8 f32: Q_L transposed (row i: component i of the 8 leading basis vectors)
//   xr     dp f32 scratch: the vector zero-padded to dp
//   cs     k × dp f32: the codewords by sorted position, zero-padded to dp
//   lead   k f32: each sorted position's first leading coefficient (the sort key)
//   zt     ⌈k/4⌉ groups × 8 × 4 f32: the leading coefficients of four positions, lane-wise
//   ztrest ⌈k/4⌉ × 4 f32: ‖(Q c_j)_T‖, lane-wise
//   c      k × d f32: the codewords as given, by index (for exact distances)
//   perm   k i32: the codeword index at each sorted position
//   cand   k × 8 bytes scratch: (position, float32 distance) of the candidates kept
//   pend   n × 8 bytes scratch: (vector, index) of the vectors with a single finalist
//   idx    n u32 output, dist n f64 output (exactDistance's bits)
//
// Exactness. The answer is the index of the smallest exact distance D̃ = Σ (x_i − c_i)² (in
// order, float64), ties to the lowest index; D is the true real distance ‖x − c‖².
//   (a) A float32 sum D32 of squared differences satisfies |D32 − D| ≤ γ·D + A for its
//       non-negative terms, γ = m·u/(1 − m·u), u = 2^-24, m = dp + 10 roundings per term at
//       most (difference, square, the additions of any order used here), A = 1e-30 for every
//       absolute (subnormal) rounding; a partial sum is at most (1 + γ)·D + A (terms ≥ 0).
//   (b) D = ‖Q(x − c)‖² = D_L + D_T (Q orthonormal). With ŷ_L and ẑ_L the stored leading
//       coefficients, ‖ŷ_L − Q_L x‖ ≤ η‖x‖ and ‖ẑ_L − Q_L c‖ ≤ η‖c‖ (η: leadErrorBound in
//       encode-kernel.ts), so √D_L ≥ ‖ŷ_L − ẑ_L‖ − ρ, ρ = η(‖x‖ + max‖c‖) (triangle
//       inequality); likewise |ŷ_0 − ẑ_0| − ρ ≤ √D.
//   (c) √D_T ≥ |‖(Qx)_T‖ − ‖(Qc)_T‖| (triangle inequality); ‖(Qx)_T‖² = ‖x‖² − ‖(Qx)_L‖²
//       (Parseval), which lies within 2.1η‖x‖² (+ float64 rounding) of ‖x‖² − ‖ŷ_L‖², giving an
//       interval [rlo, rhi] for ‖(Qx)_T‖; the float32 comparison gives away at most ε.
// With B32 the smallest D32 seen so far (codeword b), D_b ≤ U² = (B32 + A)/(1 − γ). A codeword
// j is dropped only when D_j is proven > Ts = U²·(1 + 1e-9)²: then D_j > D_b·(1 + 1e-9)² and,
// float64 sums of d + 2 roundings being within a relative 1e-13 of D, D̃_j > D̃_b: j is neither
// the nearest nor tied with it. The tests: the group bound (b) + (c) (computed in float32 with
// P shrunk by its own error first, compared with Ts·(1 + 1e-6), which covers the few roundings
// of the bound); the partial float32 distance (partial distance elimination) against
// T32 = (1 + γ)·Ts + A; and, to stop the scan, (|ŷ_0 − ẑ_0| − ρ)² against Ts: the codewords
// are sorted by ẑ_0, so the gap only grows along each side, and Ts only shrinks. The nearest
// codeword and every codeword tied with it are never dropped; the finalists (D32 ≤ T32 at
// the end) are compared by exact distance, ties to the lowest index. Vectors whose norms
// could overflow float32 (or are not finite) take an exhaustive exact search.
// ===========================================================================================

const ENC_A: f64 = 1e-30;
/** Leading coefficients of the first filter (xr and z rows hold at least this many, zero-padded). */
const ENC_LEAD = 8;

/** Float32 squared distance of two dp-rows (dp a multiple of 4); stops early above limit. */
// @ts-ignore: decorator
@inline
function encDistance32(x: usize, c: usize, rowBytes: usize, limit: f64): f64 {
  let a0 = f32x4.splat(0), a1 = f32x4.splat(0), a2 = f32x4.splat(0), a3 = f32x4.splat(0);
  let o: usize = 0;
  while (o + 64 <= rowBytes) {
    const t0 = f32x4.sub(v128.load(x + o), v128.load(c + o));
    const t1 = f32x4.sub(v128.load(x + o, 16), v128.load(c + o, 16));
    const t2 = f32x4.sub(v128.load(x + o, 32), v128.load(c + o, 32));
    const t3 = f32x4.sub(v128.load(x + o, 48), v128.load(c + o, 48));
    a0 = f32x4.add(a0, f32x4.mul(t0, t0));
    a1 = f32x4.add(a1, f32x4.mul(t1, t1));
    a2 = f32x4.add(a2, f32x4.mul(t2, t2));
    a3 = f32x4.add(a3, f32x4.mul(t3, t3));
    o += 64;
    const s = f32x4.add(f32x4.add(a0, a1), f32x4.add(a2, a3));
    const p = <f64>((f32x4.extract_lane(s, 0) + f32x4.extract_lane(s, 1)) + (f32x4.extract_lane(s, 2) + f32x4.extract_lane(s, 3)));
    if (p > limit) return p;
  }
  while (o < rowBytes) {
    const t0 = f32x4.sub(v128.load(x + o), v128.load(c + o));
    a0 = f32x4.add(a0, f32x4.mul(t0, t0));
    o += 16;
  }
  const s = f32x4.add(f32x4.add(a0, a1), f32x4.add(a2, a3));
  return <f64>((f32x4.extract_lane(s, 0) + f32x4.extract_lane(s, 1)) + (f32x4.extract_lane(s, 2) + f32x4.extract_lane(s, 3)));
}

/** Σ of the squares of four float32 lanes in float64 (in lane 0 of the result). */
// @ts-ignore: decorator
@inline
function encSquares(v: v128): v128 {
  const lo = f64x2.promote_low_f32x4(v);
  const hi = f64x2.promote_low_f32x4(v128.shuffle<f32>(v, v, 2, 3, 0, 1));
  const s = f64x2.add(f64x2.mul(lo, lo), f64x2.mul(hi, hi));
  return f64x2.add(s, v128.shuffle<f64>(s, s, 1, 0));
}

/** exactDistance: Σ (x_i − c_i)² over i = 0..d−1 in this order, float64. */
// @ts-ignore: decorator
@inline
function encExact(x: usize, c: usize, d: i32): f64 {
  let s: f64 = 0;
  for (let i = 0; i < d; i++) {
    const t = <f64>load<f32>(x + <usize>i * 4) - <f64>load<f32>(c + <usize>i * 4);
    s += t * t;
  }
  return s;
}

/**
 * Nearest codeword of n block vectors for encoding (see the section comment for why every
 * dropped codeword is provably not the answer). Writes idx and dist; returns how many
 * vectors compared more than one finalist exactly.
 */
export function encodeRows(
  xoPtr: usize, n: i32, d: i32, dp: i32, qtPtr: usize, xr: usize,
  csPtr: usize, leadPtr: usize, ztPtr: usize, ztRestPtr: usize,
  cPtr: usize, permPtr: usize, k: i32, maxNorm: f64, eta: f64,
  candPtr: usize, pendPtr: usize, idxPtr: usize, distPtr: usize,
): i32 {
  const rowBytes = <usize>dp * 4;
  const m = <f64>(dp + 10);
  const gamma = (m * U32) / (1 - m * U32);
  const groups = (k + 3) >> 2;
  const groupBytes: usize = ENC_LEAD * 16;
  const widen: f64 = (1 + 1e-9) * (1 + 1e-9);
  let prev = -1;
  let pending = 0;
  let multi = 0;
  for (let v = 0; v < n; v++) {
    const xo = xoPtr + <usize>v * <usize>d * 4;
    // The row zero-padded to dp, the squared norm, and the leading coefficients ŷ_L = Q_L x
    // (float32, Σ_i x_i · Q_L[:, i], two accumulators of four coefficients).
    let ss: f64 = 0;
    let ya = f32x4.splat(0), yb = f32x4.splat(0);
    for (let i = 0; i < d; i++) {
      const t = load<f32>(xo + <usize>i * 4);
      store<f32>(xr + <usize>i * 4, t);
      ss += <f64>t * <f64>t;
      const s = f32x4.splat(t);
      ya = f32x4.add(ya, f32x4.mul(s, v128.load(qtPtr + <usize>i * 32)));
      yb = f32x4.add(yb, f32x4.mul(s, v128.load(qtPtr + <usize>i * 32, 16)));
    }
    for (let i = d; i < dp; i++) store<f32>(xr + <usize>i * 4, 0);
    const xn = Math.sqrt(ss);
    if (!((xn + maxNorm) * (xn + maxNorm) < 1e30)) {
      // Exhaustive exact search: overflow-prone or non-finite input.
      let bd: f64 = Infinity;
      let bj: i32 = -1;
      for (let j = 0; j < k; j++) {
        const dj = encExact(xo, cPtr + <usize>j * <usize>d * 4, d);
        if (bj < 0 || dj < bd) { bd = dj; bj = j; }
      }
      store<u32>(idxPtr + <usize>v * 4, <u32>bj);
      store<f64>(distPtr + <usize>v * 8, bd);
      prev = -1;
      continue;
    }
    const rho = eta * (xn + maxNorm) * (1 + 1e-9);
    // ‖(Qx)_T‖² = ‖x‖² − ‖(Qx)_L‖² (Parseval); ‖ŷ_L‖ is within ρ_x = η‖x‖ of ‖(Qx)_L‖, so the
    // square within 2.1η‖x‖², and ss within 1e-13 of ‖x‖²: the rest norm lies in [rlo, rhi].
    const yl = f64x2.extract_lane(encSquares(ya), 0) + f64x2.extract_lane(encSquares(yb), 0);
    const slack = (2.1 * eta + 1e-12) * ss * (1 + 1e-9) + ENC_A;
    const r2 = ss - yl;
    const rlo = r2 - slack > 0 ? Math.sqrt(r2 - slack) : 0;
    const rhi = Math.sqrt((r2 > 0 ? r2 : 0) + slack);
    const eps = <f32>(4 * U32 * (xn + maxNorm) + ENC_A);
    const y0 = <f64>f32x4.extract_lane(ya, 0);
    // First sorted position whose leading coefficient is ≥ the vector's.
    let lo = 0, hi = k;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (<f64>load<f32>(leadPtr + <usize>mid * 4) < y0) lo = mid + 1; else hi = mid;
    }
    const start = lo < k ? lo : k - 1;
    // Two first guesses: the codeword nearest in the leading coefficient and the previous
    // block's winner (neighbouring blocks are often alike).
    let best = encDistance32(xr, csPtr + <usize>start * rowBytes, rowBytes, Infinity);
    let count = 1;
    store<i32>(candPtr, start);
    store<f32>(candPtr, <f32>best, 4);
    if (prev >= 0 && prev != start) {
      const dj = encDistance32(xr, csPtr + <usize>prev * rowBytes, rowBytes, Infinity);
      store<i32>(candPtr + 8, prev);
      store<f32>(candPtr + 8, <f32>dj, 4);
      count = 2;
      if (dj < best) best = dj;
    }
    let ts = (best + ENC_A) / (1 - gamma) * widen;
    let t32 = (1 + gamma) * ts + ENC_A;
    const p0 = prev;
    let limit = f32x4.splat(<f32>(ts * (1 + 1e-6)));
    let limit32 = t32;
    // Lanes of ŷ_L as splats for the group filter.
    const s0 = f32x4.splat(f32x4.extract_lane(ya, 0)), s1 = f32x4.splat(f32x4.extract_lane(ya, 1));
    const s2 = f32x4.splat(f32x4.extract_lane(ya, 2)), s3 = f32x4.splat(f32x4.extract_lane(ya, 3));
    const s4 = f32x4.splat(f32x4.extract_lane(yb, 0)), s5 = f32x4.splat(f32x4.extract_lane(yb, 1));
    const s6 = f32x4.splat(f32x4.extract_lane(yb, 2)), s7 = f32x4.splat(f32x4.extract_lane(yb, 3));
    const shrink = f32x4.splat(<f32>(1 - 4 * gamma));
    const rhoV = f32x4.splat(<f32>(rho * (1 + 1e-6)));
    const rloV = f32x4.splat(<f32>rlo), rhiV = f32x4.splat(<f32>rhi), epsV = f32x4.splat(eps);
    const zero = f32x4.splat(0);
    // Groups of four positions, outward from the start's group on both sides; a side stops
    // once its nearest position's leading gap alone exceeds the bound (further groups lie
    // further out).
    let gDown = (start >> 2) - 1;
    let gUp = start >> 2;
    while (gDown >= 0 || gUp < groups) {
      let gi: i32;
      const gapDown = gDown >= 0 ? y0 - <f64>load<f32>(leadPtr + <usize>((gDown << 2) + 3) * 4) : Infinity;
      const lastUp = gUp < groups ? min((gUp << 2), k - 1) : 0;
      const gapUp = gUp < groups ? <f64>load<f32>(leadPtr + <usize>lastUp * 4) - y0 : Infinity;
      if (gapDown <= gapUp) {
        const g = gapDown - rho;
        if (g > 0 && g * g * (1 - 1e-12) > ts) { gDown = -1; continue; }
        gi = gDown--;
      } else {
        const g = gapUp - rho;
        if (g > 0 && g * g * (1 - 1e-12) > ts) { gUp = groups; continue; }
        gi = gUp++;
      }
      const zt = ztPtr + <usize>gi * groupBytes;
      const t0 = f32x4.sub(s0, v128.load(zt)), t1 = f32x4.sub(s1, v128.load(zt, 16));
      const t2 = f32x4.sub(s2, v128.load(zt, 32)), t3 = f32x4.sub(s3, v128.load(zt, 48));
      const t4 = f32x4.sub(s4, v128.load(zt, 64)), t5 = f32x4.sub(s5, v128.load(zt, 80));
      const t6 = f32x4.sub(s6, v128.load(zt, 96)), t7 = f32x4.sub(s7, v128.load(zt, 112));
      const p = f32x4.add(
        f32x4.add(f32x4.add(f32x4.mul(t0, t0), f32x4.mul(t1, t1)), f32x4.add(f32x4.mul(t2, t2), f32x4.mul(t3, t3))),
        f32x4.add(f32x4.add(f32x4.mul(t4, t4), f32x4.mul(t5, t5)), f32x4.add(f32x4.mul(t6, t6), f32x4.mul(t7, t7))),
      );
      // (√P − ρ)₊² + (rest gap − ε)₊², P shrunk by its float32 error first.
      let a = f32x4.pmax(f32x4.sub(f32x4.sqrt(f32x4.mul(p, shrink)), rhoV), zero);
      const zr = v128.load(ztRestPtr + <usize>gi * 16);
      let b = f32x4.sub(f32x4.pmax(f32x4.sub(zr, rhiV), f32x4.sub(rloV, zr)), epsV);
      b = f32x4.pmax(b, zero);
      const lb = f32x4.add(f32x4.mul(a, a), f32x4.mul(b, b));
      let mask = i32x4.bitmask(f32x4.le(lb, limit));
      while (mask != 0) {
        const lane = ctz(mask);
        mask &= mask - 1;
        const q = (gi << 2) + lane;
        if (q == start || q == p0 || q >= k) continue;
        const dj = encDistance32(xr, csPtr + <usize>q * rowBytes, rowBytes, limit32);
        if (dj > limit32) continue;
        if (dj < best) {
          best = dj;
          ts = (best + ENC_A) / (1 - gamma) * widen;
          t32 = (1 + gamma) * ts + ENC_A;
          limit = f32x4.splat(<f32>(ts * (1 + 1e-6)));
          limit32 = t32;
        }
        store<i32>(candPtr + <usize>count * 8, q);
        store<f32>(candPtr + <usize>count * 8, <f32>dj, 4);
        count++;
      }
    }
    // Finalists: the candidates still within T32 of the final B32.
    let finalists = 0;
    let only = -1;
    for (let c = 0; c < count; c++) {
      if (<f64>load<f32>(candPtr + <usize>c * 8, 4) <= t32) {
        finalists++;
        only = load<i32>(candPtr + <usize>c * 8);
      }
    }
    if (finalists == 1) {
      store<i32>(pendPtr + <usize>pending * 8, v);
      store<i32>(pendPtr + <usize>pending * 8, load<i32>(permPtr + <usize>only * 4), 4);
      pending++;
      prev = only;
      continue;
    }
    multi++;
    let bd: f64 = Infinity;
    let bj: i32 = -1;
    let bp = 0;
    for (let c = 0; c < count; c++) {
      if (!(<f64>load<f32>(candPtr + <usize>c * 8, 4) <= t32)) continue;
      const p = load<i32>(candPtr + <usize>c * 8);
      const j = load<i32>(permPtr + <usize>p * 4);
      const dj = encExact(xo, cPtr + <usize>j * <usize>d * 4, d);
      if (bj < 0 || dj < bd || (dj == bd && j < bj)) { bd = dj; bj = j; bp = p; }
    }
    store<u32>(idxPtr + <usize>v * 4, <u32>bj);
    store<f64>(distPtr + <usize>v * 8, bd);
    prev = bp;
  }
  // Exact distances of the single finalists, four vectors at a time: independent float64
  // chains, each still summed over i = 0..d−1 in order (exactDistance's bits).
  const xBytes = <usize>d * 4;
  for (let q = 0; q < pending; q += 4) {
    const q1 = min(q + 1, pending - 1), q2 = min(q + 2, pending - 1), q3 = min(q + 3, pending - 1);
    const v0 = load<i32>(pendPtr + <usize>q * 8), j0 = load<i32>(pendPtr + <usize>q * 8, 4);
    const v1 = load<i32>(pendPtr + <usize>q1 * 8), j1 = load<i32>(pendPtr + <usize>q1 * 8, 4);
    const v2 = load<i32>(pendPtr + <usize>q2 * 8), j2 = load<i32>(pendPtr + <usize>q2 * 8, 4);
    const v3 = load<i32>(pendPtr + <usize>q3 * 8), j3 = load<i32>(pendPtr + <usize>q3 * 8, 4);
    const x0 = xoPtr + <usize>v0 * xBytes, x1 = xoPtr + <usize>v1 * xBytes;
    const x2 = xoPtr + <usize>v2 * xBytes, x3 = xoPtr + <usize>v3 * xBytes;
    const c0 = cPtr + <usize>j0 * xBytes, c1 = cPtr + <usize>j1 * xBytes;
    const c2 = cPtr + <usize>j2 * xBytes, c3 = cPtr + <usize>j3 * xBytes;
    let s0: f64 = 0, s1: f64 = 0, s2: f64 = 0, s3: f64 = 0;
    for (let o: usize = 0; o < xBytes; o += 4) {
      const t0 = <f64>load<f32>(x0 + o) - <f64>load<f32>(c0 + o);
      const t1 = <f64>load<f32>(x1 + o) - <f64>load<f32>(c1 + o);
      const t2 = <f64>load<f32>(x2 + o) - <f64>load<f32>(c2 + o);
      const t3 = <f64>load<f32>(x3 + o) - <f64>load<f32>(c3 + o);
      s0 += t0 * t0;
      s1 += t1 * t1;
      s2 += t2 * t2;
      s3 += t3 * t3;
    }
    // Slots past the end repeat the last vector; writing its values again is harmless.
    store<u32>(idxPtr + <usize>v0 * 4, <u32>j0);
    store<u32>(idxPtr + <usize>v1 * 4, <u32>j1);
    store<u32>(idxPtr + <usize>v2 * 4, <u32>j2);
    store<u32>(idxPtr + <usize>v3 * 4, <u32>j3);
    store<f64>(distPtr + <usize>v0 * 8, s0);
    store<f64>(distPtr + <usize>v1 * 8, s1);
    store<f64>(distPtr + <usize>v2 * 8, s2);
    store<f64>(distPtr + <usize>v3 * 8, s3);
  }
  return multi;
}

/**
 * Tree descent (../../structures/tree-search.ts has the error argument): for each of n vectors (x: n × d f32,
 * row-major), from node 0 while the node has children, m = x·w − θ in float64 (w: nodes × d f64, θ: nodes f64);
 * right when m > margin, left when m < −margin, margin = slack·(‖x‖·up + radius)²; otherwise right exactly when the
 * exact float64 distance to the right child's codeword (c: nodes × d f32) is below the left one's, each summed as
 * Σ (x_i − c_i)² in component order. children: nodes × 2 i32 (−1 for a leaf). Writes per vector the leaf (u32), the
 * path (u32, first branch most significant), its length (u8) and the leaf's exact distance (f64); xs: d f64 scratch.
 * Returns the number of nodes decided by the two distances.
 */
export function descendTree(
  xPtr: usize, n: i32, d: i32, cPtr: usize, childPtr: usize, wPtr: usize, thPtr: usize, radPtr: usize, slack: f64, up: f64,
  xsPtr: usize, leafPtr: usize, pathPtr: usize, lenPtr: usize, distPtr: usize,
): i32 {
  let redecided = 0;
  const d2 = d & ~1;
  for (let v = 0; v < n; v++) {
    const xo = xPtr + <usize>(v * d) * 4;
    let xx: f64 = 0;
    for (let i = 0; i < d; i++) {
      const xi = <f64>load<f32>(xo + <usize>i * 4);
      store<f64>(xsPtr + <usize>i * 8, xi);
      xx += xi * xi;
    }
    const xn = Math.sqrt(xx) * up;
    let t: i32 = 0;
    let path: u32 = 0;
    let length: u32 = 0;
    let left = load<i32>(childPtr);
    while (left >= 0) {
      const right = load<i32>(childPtr + <usize>(2 * t + 1) * 4);
      const wo = wPtr + <usize>(t * d) * 8;
      let acc = f64x2.splat(0);
      let i = 0;
      for (; i < d2; i += 2) acc = f64x2.add(acc, f64x2.mul(v128.load(xsPtr + <usize>i * 8), v128.load(wo + <usize>i * 8)));
      let s = f64x2.extract_lane(acc, 0) + f64x2.extract_lane(acc, 1);
      if (i < d) s += load<f64>(xsPtr + <usize>i * 8) * load<f64>(wo + <usize>i * 8);
      const m = s - load<f64>(thPtr + <usize>t * 8);
      const reach = xn + load<f64>(radPtr + <usize>t * 8);
      const margin = slack * reach * reach;
      let goRight: bool;
      if (m > margin) goRight = true;
      else if (m < -margin) goRight = false;
      else {
        redecided++;
        goRight = exactDistance(xo, cPtr + <usize>(right * d) * 4, d) < exactDistance(xo, cPtr + <usize>(left * d) * 4, d);
      }
      t = goRight ? right : left;
      path = (path << 1) | (goRight ? 1 : 0);
      length++;
      left = load<i32>(childPtr + <usize>(2 * t) * 4);
    }
    store<u32>(leafPtr + <usize>v * 4, <u32>t);
    store<u32>(pathPtr + <usize>v * 4, path);
    store<u8>(lenPtr + <usize>v, <u8>length);
    store<f64>(distPtr + <usize>v * 8, exactDistance(xo, cPtr + <usize>(t * d) * 4, d));
  }
  return redecided;
}

/**
 * Residual stage scores (../../structures/residual-search.ts has the error argument): for rows r of rest (rows × d
 * f64) and codewords j of w (k × d f64), out[r·k + j] = rr[r] + 2·(hn[j] − rest_r·w_j), in float64 (the inner product
 * two lanes at a time, the odd component last).
 */
export function scoreStage(restPtr: usize, rows: i32, d: i32, wPtr: usize, k: i32, hnPtr: usize, rrPtr: usize, outPtr: usize): void {
  const d2 = d & ~1;
  for (let r = 0; r < rows; r++) {
    const ro = restPtr + <usize>(r * d) * 8;
    const rr = load<f64>(rrPtr + <usize>r * 8);
    for (let j = 0; j < k; j++) {
      const wo = wPtr + <usize>(j * d) * 8;
      let acc = f64x2.splat(0);
      let i = 0;
      for (; i < d2; i += 2) acc = f64x2.add(acc, f64x2.mul(v128.load(ro + <usize>i * 8), v128.load(wo + <usize>i * 8)));
      let s = f64x2.extract_lane(acc, 0) + f64x2.extract_lane(acc, 1);
      if (i < d) s += load<f64>(ro + <usize>i * 8) * load<f64>(wo + <usize>i * 8);
      store<f64>(outPtr + <usize>(r * k + j) * 8, rr + 2 * (load<f64>(hnPtr + <usize>j * 8) - s));
    }
  }
}

/**
 * Greedy residual search of n vectors (x: n × d f32) through `stages` stages (../../structures/residual-search.ts has
 * the rule and its error argument; this is its M = 1 case, block by block): per stage, r = x − p (p the float64 sum of
 * the codewords chosen so far), scores ‖r‖² + 2(hn_j − r·w_j) for the stage's codewords (w: total × d f64, hn: total
 * f64, stage s at offsets[s], sizes[s] long; i32 each), margin G = slack·(‖r‖·up + rad[s])²; the codewords whose score
 * less G is not above the smallest score plus G are scored the plain way, Σ ((x_i − p_i) − w_i)² in float64, and the
 * first lowest wins. Writes the stage indices (n × stages u32, block-major) and exactDistance of x to f32(p) (n f64).
 * rest, partial: d f64 scratch; scores: the widest stage's f64 scratch; recon: d f32 scratch. Returns the codewords
 * scored the plain way.
 */
export function residualGreedy(
  xPtr: usize, n: i32, d: i32, wPtr: usize, hnPtr: usize, stages: i32, offsetsPtr: usize, sizesPtr: usize, radPtr: usize,
  slack: f64, up: f64, restPtr: usize, partialPtr: usize, scoresPtr: usize, reconPtr: usize, idxPtr: usize, distPtr: usize,
): i32 {
  let rescored = 0;
  const d2 = d & ~1;
  for (let v = 0; v < n; v++) {
    const xo = xPtr + <usize>(v * d) * 4;
    for (let i = 0; i < d; i++) store<f64>(partialPtr + <usize>i * 8, 0);
    for (let s = 0; s < stages; s++) {
      const base = load<i32>(offsetsPtr + <usize>s * 4);
      const k = load<i32>(sizesPtr + <usize>s * 4);
      let rr: f64 = 0;
      for (let i = 0; i < d; i++) {
        const r = <f64>load<f32>(xo + <usize>i * 4) - load<f64>(partialPtr + <usize>i * 8);
        store<f64>(restPtr + <usize>i * 8, r);
        rr += r * r;
      }
      const reach = Math.sqrt(rr) * up + load<f64>(radPtr + <usize>s * 8);
      const band = slack * reach * reach;
      let lowest = Infinity;
      for (let j = 0; j < k; j++) {
        const wo = wPtr + <usize>((base + j) * d) * 8;
        let acc = f64x2.splat(0);
        let i = 0;
        for (; i < d2; i += 2) acc = f64x2.add(acc, f64x2.mul(v128.load(restPtr + <usize>i * 8), v128.load(wo + <usize>i * 8)));
        let dot = f64x2.extract_lane(acc, 0) + f64x2.extract_lane(acc, 1);
        if (i < d) dot += load<f64>(restPtr + <usize>i * 8) * load<f64>(wo + <usize>i * 8);
        const score = rr + 2 * (load<f64>(hnPtr + <usize>(base + j) * 8) - dot);
        store<f64>(scoresPtr + <usize>j * 8, score);
        if (score < lowest) lowest = score;
      }
      const limit = lowest + band;
      let best = 0;
      let bestE = Infinity;
      for (let j = 0; j < k; j++) {
        if (load<f64>(scoresPtr + <usize>j * 8) - band > limit) continue;
        rescored++;
        const wo = wPtr + <usize>((base + j) * d) * 8;
        let e: f64 = 0;
        for (let i = 0; i < d; i++) {
          const t = load<f64>(restPtr + <usize>i * 8) - load<f64>(wo + <usize>i * 8);
          e += t * t;
        }
        if (e < bestE) {
          bestE = e;
          best = j;
        }
      }
      const wo = wPtr + <usize>((base + best) * d) * 8;
      for (let i = 0; i < d; i++) store<f64>(partialPtr + <usize>i * 8, load<f64>(partialPtr + <usize>i * 8) + load<f64>(wo + <usize>i * 8));
      store<u32>(idxPtr + <usize>(v * stages + s) * 4, <u32>best);
    }
    for (let i = 0; i < d; i++) store<f32>(reconPtr + <usize>i * 4, <f32>load<f64>(partialPtr + <usize>i * 8));
    store<f64>(distPtr + <usize>v * 8, exactDistance(xo, reconPtr, d));
  }
  return rescored;
}

// ---- k-means++ seeding step (../../core/seed-kernel.ts; the rule is core/init seedUpdateWithTotal) ----

/** Vectors tested per round of seedStep: their candidates, D² and rows stay in L1/L2 between its three phases. */
const SEED_BLOCK: i32 = 512;

/**
 * One k-means++ step over n vectors x (n × d f32, row-major) for the newest codeword c (d f32 at cPtr, index cIdx):
 * the same decisions and the same float64 operations in the same order as core/init seedUpdateWithTotal, so the D²
 * (minPtr, n f64), nearest indices (nearPtr, n u32) and the returned total are its bits exactly.
 * - The skip tests (triangle through the nearest codeword with fromNewest (fromPtr, f64 by codeword) and `prune`;
 *   the norm test with norms (normsPtr, n f64), normC and `margin`) are the JS expressions, operand for operand.
 * - A distance is Σ (f64(x_i) − f64(c_i))² added in component order, stopped at a multiple of 4 components once it
 *   reaches the vector's D², as the JS loop does. Four vectors run side by side, one per f64x2 lane, each lane its own
 *   chain of additions in component order; a lane that has reached its D² while another has not keeps adding
 *   non-negative terms, which never lowers a float64 sum, so its `s < m` decision is the JS one.
 * - The total adds the D² in vector order, each block's once its updates are made (while the next block is tested).
 * - The skip tests of two vectors run at once in f64x2 lanes, each lane the scalar expressions; no branch decides
 *   them (a vector is written to the candidate list in any case, and the list grows only when nothing skips it).
 * c64Ptr: scratch d × 16 bytes (each component of c twice, as f64); listPtr: SEED_BLOCK u32 scratch; the vectors whose
 * D² changed are written, in order, to changedPtr (n u32) and their count to countPtr (u32). Returns the total.
 */
export function seedStep(
  xPtr: usize, n: i32, d: i32, cPtr: usize, cIdx: i32, normC: f64, prune: f64, margin: f64,
  minPtr: usize, nearPtr: usize, fromPtr: usize, normsPtr: usize, c64Ptr: usize, listPtr: usize, changedPtr: usize, countPtr: usize,
): f64 {
  for (let i = 0; i < d; i++) v128.store(c64Ptr + <usize>i * 16, f64x2.splat(<f64>load<f32>(cPtr + <usize>i * 4)));
  const whole = d - (d & 3);
  const margin1: f64 = 1 + margin;
  const rowBytes = <usize>d * 4;
  let total: f64 = 0;
  let changed = 0;
  for (let b = 0; b < n; b += SEED_BLOCK) {
    const e = min(n, b + SEED_BLOCK);
    let count = 0;
    // The previous block (full, and final now) goes into the total here, in vector order: the chain of additions then
    // runs alongside this block's tests instead of on its own.
    const pb = b - SEED_BLOCK;
    let v = b;
    for (; v + 1 < e; v += 2) {
      if (b > 0) {
        total += load<f64>(minPtr + <usize>(pb + v - b) * 8);
        total += load<f64>(minPtr + <usize>(pb + v - b + 1) * 8);
      }
      count = seedCandidates2(v, minPtr, nearPtr, fromPtr, normsPtr, normC, prune, margin, margin1, listPtr, count);
    }
    if (v < e) {
      if (b > 0) total += load<f64>(minPtr + <usize>(pb + v - b) * 8);
      count = seedCandidate(v, minPtr, nearPtr, fromPtr, normsPtr, normC, prune, margin, margin1, listPtr, count);
      v++;
    }
    // A last block shorter than the previous one: the rest of the previous block's D².
    if (b > 0) for (v = pb + (e - b); v < b; v++) total += load<f64>(minPtr + <usize>v * 8);
    for (let q = 0; q < count; q += 4) {
      const real = min(4, count - q);
      const v0 = load<u32>(listPtr + <usize>q * 4);
      // Missing lanes read vector v0 against a D² of 0: done from the start, never written back.
      const v1 = real > 1 ? load<u32>(listPtr + <usize>(q + 1) * 4) : v0;
      const v2 = real > 2 ? load<u32>(listPtr + <usize>(q + 2) * 4) : v0;
      const v3 = real > 3 ? load<u32>(listPtr + <usize>(q + 3) * 4) : v0;
      const m0 = load<f64>(minPtr + <usize>v0 * 8);
      const m1 = real > 1 ? load<f64>(minPtr + <usize>v1 * 8) : 0;
      const m2 = real > 2 ? load<f64>(minPtr + <usize>v2 * 8) : 0;
      const m3 = real > 3 ? load<f64>(minPtr + <usize>v3 * 8) : 0;
      const mA = f64x2.replace_lane(f64x2.splat(m0), 1, m1);
      const mB = f64x2.replace_lane(f64x2.splat(m2), 1, m3);
      const p0 = xPtr + <usize>v0 * rowBytes, p1 = xPtr + <usize>v1 * rowBytes;
      const p2 = xPtr + <usize>v2 * rowBytes, p3 = xPtr + <usize>v3 * rowBytes;
      let sA = f64x2.splat(0);
      let sB = f64x2.splat(0);
      let j = 0;
      for (; j < whole; j += 4) {
        const o = <usize>j * 4;
        const x0 = v128.load(p0 + o), x1 = v128.load(p1 + o), x2 = v128.load(p2 + o), x3 = v128.load(p3 + o);
        const cp = c64Ptr + <usize>j * 16;
        // Component j + t of lanes (v0, v1) and (v2, v3), promoted exactly to f64.
        let c = v128.load(cp);
        let tA = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x0, x1, 0, 4, 0, 4)), c);
        let tB = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x2, x3, 0, 4, 0, 4)), c);
        sA = f64x2.add(sA, f64x2.mul(tA, tA));
        sB = f64x2.add(sB, f64x2.mul(tB, tB));
        c = v128.load(cp + 16);
        tA = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x0, x1, 1, 5, 1, 5)), c);
        tB = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x2, x3, 1, 5, 1, 5)), c);
        sA = f64x2.add(sA, f64x2.mul(tA, tA));
        sB = f64x2.add(sB, f64x2.mul(tB, tB));
        c = v128.load(cp + 32);
        tA = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x0, x1, 2, 6, 2, 6)), c);
        tB = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x2, x3, 2, 6, 2, 6)), c);
        sA = f64x2.add(sA, f64x2.mul(tA, tA));
        sB = f64x2.add(sB, f64x2.mul(tB, tB));
        c = v128.load(cp + 48);
        tA = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x0, x1, 3, 7, 3, 7)), c);
        tB = f64x2.sub(f64x2.promote_low_f32x4(v128.shuffle<f32>(x2, x3, 3, 7, 3, 7)), c);
        sA = f64x2.add(sA, f64x2.mul(tA, tA));
        sB = f64x2.add(sB, f64x2.mul(tB, tB));
        if (i64x2.all_true(f64x2.ge(sA, mA)) && i64x2.all_true(f64x2.ge(sB, mB))) break;
      }
      if (j >= whole) {
        for (; j < d; j++) {
          const c = v128.load(c64Ptr + <usize>j * 16);
          const o = <usize>j * 4;
          const xA = f64x2.replace_lane(f64x2.splat(<f64>load<f32>(p0 + o)), 1, <f64>load<f32>(p1 + o));
          const xB = f64x2.replace_lane(f64x2.splat(<f64>load<f32>(p2 + o)), 1, <f64>load<f32>(p3 + o));
          const tA = f64x2.sub(xA, c);
          const tB = f64x2.sub(xB, c);
          sA = f64x2.add(sA, f64x2.mul(tA, tA));
          sB = f64x2.add(sB, f64x2.mul(tB, tB));
        }
      }
      changed = seedTake(f64x2.extract_lane(sA, 0), m0, v0, cIdx, minPtr, nearPtr, changedPtr, changed);
      if (real > 1) changed = seedTake(f64x2.extract_lane(sA, 1), m1, v1, cIdx, minPtr, nearPtr, changedPtr, changed);
      if (real > 2) changed = seedTake(f64x2.extract_lane(sB, 0), m2, v2, cIdx, minPtr, nearPtr, changedPtr, changed);
      if (real > 3) changed = seedTake(f64x2.extract_lane(sB, 1), m3, v3, cIdx, minPtr, nearPtr, changedPtr, changed);
    }
  }
  // The last block's D², which no later block's tests took in.
  if (n > 0) for (let v = (n - 1) / SEED_BLOCK * SEED_BLOCK; v < n; v++) total += load<f64>(minPtr + <usize>v * 8);
  store<u32>(countPtr, changed);
  return total;
}

/**
 * seedStep's skip tests for vector v, the JS ones (core/init seedUpdateWithTotal) joined without branches: v is written
 * at the list's end, which grows by one when none of them skips it. Returns the list's length.
 */
// @ts-ignore: decorator
@inline
function seedCandidate(
  v: i32, minPtr: usize, nearPtr: usize, fromPtr: usize, normsPtr: usize, normC: f64, prune: f64, margin: f64, margin1: f64,
  listPtr: usize, count: i32,
): i32 {
  const m = load<f64>(minPtr + <usize>v * 8);
  const far = load<f64>(fromPtr + <usize>load<u32>(nearPtr + <usize>v * 4) * 8) > prune * m;
  const nx = load<f64>(normsPtr + <usize>v * 8);
  const gap = abs(nx - normC) - margin * (nx + normC);
  const skip = <i32>(m == 0) | <i32>far | (<i32>(gap > 0) & <i32>(gap * gap > m * margin1));
  store<u32>(listPtr + <usize>count * 4, v);
  return count + (skip ^ 1);
}

/** seedCandidate for vectors v and v + 1 at once, in f64x2 lanes (the same operations on each). */
// @ts-ignore: decorator
@inline
function seedCandidates2(
  v: i32, minPtr: usize, nearPtr: usize, fromPtr: usize, normsPtr: usize, normC: f64, prune: f64, margin: f64, margin1: f64,
  listPtr: usize, count: i32,
): i32 {
  const m = v128.load(minPtr + <usize>v * 8);
  const near = v128.load64_zero(nearPtr + <usize>v * 4);
  const f0 = load<f64>(fromPtr + <usize>i32x4.extract_lane(near, 0) * 8);
  const f1 = load<f64>(fromPtr + <usize>i32x4.extract_lane(near, 1) * 8);
  const far = f64x2.gt(f64x2.replace_lane(f64x2.splat(f0), 1, f1), f64x2.mul(f64x2.splat(prune), m));
  const nx = v128.load(normsPtr + <usize>v * 8);
  const nc = f64x2.splat(normC);
  const gap = f64x2.sub(f64x2.abs(f64x2.sub(nx, nc)), f64x2.mul(f64x2.splat(margin), f64x2.add(nx, nc)));
  const normFar = v128.and(f64x2.gt(gap, f64x2.splat(0)), f64x2.gt(f64x2.mul(gap, gap), f64x2.mul(m, f64x2.splat(margin1))));
  const skip = v128.or(v128.or(f64x2.eq(m, f64x2.splat(0)), far), normFar);
  const bits = i64x2.bitmask(skip);
  store<u32>(listPtr + <usize>count * 4, v);
  count += (bits & 1) ^ 1;
  store<u32>(listPtr + <usize>count * 4, v + 1);
  return count + ((bits >> 1) ^ 1);
}

/** seedStep's move of vector v to codeword c when its distance s is strictly below its D² m; returns the changed count. */
// @ts-ignore: decorator
@inline
function seedTake(s: f64, m: f64, v: u32, c: i32, minPtr: usize, nearPtr: usize, changedPtr: usize, changed: i32): i32 {
  if (!(s < m)) return changed;
  store<f64>(minPtr + <usize>v * 8, s);
  store<u32>(nearPtr + <usize>v * 4, <u32>c);
  store<u32>(changedPtr + <usize>changed * 4, v);
  return changed + 1;
}
