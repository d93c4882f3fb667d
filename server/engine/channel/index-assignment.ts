import { makeCodebook, type Codebook } from '../format/codebook-schema';
import { indexBits } from '../format/rate-bits';
import { channelDistortion, usagePrior } from './expected';
import { REORDER_MIN_GAIN } from './limits';
import { concealIndex, popcount, transitionByDistance } from './transition';

export interface IndexAssignment {
  /** the reordered codebook: codeword n of it is codeword `order[n]` of the input */
  codebook: Codebook;
  order: Uint32Array; // K
  /** expected channel distortion per component (channelDistortion) at the design rate, before and after */
  before: number;
  after: number;
  swaps: number;
}

/**
 * The state of the binary switching search. Slot s sends codeword at[s]; a received word decodes to a slot, so the
 * channel acts on slots through W[s][r] = Σ over received words t that decode to slot r of P(t | s). The expected
 * channel distortion is D = Σ_s Σ_r W[s][r] q(at[s]) δ(at[s], at[r]), with q the codewords' prior and δ their squared
 * distance.
 *
 * A swap of slots u and v (codewords x = at[u], y = at[v]) changes rows u, v and columns u, v of that sum. Writing
 * H[s][c] = Σ_r (W[s][r] q(c) + W[r][s] q(at[r])) δ(c, at[r]) for slot s and codeword c, the change is
 * H[u][y] − H[u][x] − H[v][y] + H[v][x] less the terms with r or s in {u, v}, which are O(1) (gainOf). H costs K³
 * once and K² after each swap (only columns r = u, v change), so trying every partner of a slot costs O(K) instead of
 * the O(K²) of summing the changed rows and columns afresh.
 */
export class Switching {
  readonly at: Uint32Array;
  private readonly size: number;
  private readonly w: Float64Array; // K × K
  private readonly dist: Float64Array; // K × K squared distances between codewords
  private readonly prior: Float64Array; // K
  private readonly h: Float64Array; // K slots × K codewords

  constructor(codebook: Codebook, p: number) {
    const { size: K, dimension: d, codewords } = codebook;
    const bits = indexBits(K);
    const byDistance = transitionByDistance(p, bits);
    this.size = K;
    this.w = new Float64Array(K * K);
    for (let s = 0; s < K; s += 1) for (let t = 0; t < 2 ** bits; t += 1) this.w[s * K + concealIndex(t, K)] += byDistance[popcount(s ^ t)];
    this.prior = usagePrior(codebook.usage);
    this.at = Uint32Array.from({ length: K }, (_, i) => i);
    this.dist = new Float64Array(K * K);
    for (let i = 0; i < K; i += 1) {
      for (let j = i + 1; j < K; j += 1) {
        let s = 0;
        for (let k = 0; k < d; k += 1) s += (codewords[i * d + k] - codewords[j * d + k]) ** 2;
        this.dist[i * K + j] = s;
        this.dist[j * K + i] = s;
      }
    }
    this.h = new Float64Array(K * K);
    for (let r = 0; r < K; r += 1) this.addColumn(r, 1);
  }

  /** Adds (sign 1) or removes (sign −1) slot r's share of H, for the codeword it holds now. */
  private addColumn(r: number, sign: number): void {
    const { size: K, w, dist, prior, h, at } = this;
    const a = at[r];
    const qa = prior[a];
    for (let s = 0; s < K; s += 1) {
      const wsr = w[s * K + r];
      const wrs = w[r * K + s];
      const row = s * K;
      for (let c = 0; c < K; c += 1) h[row + c] += sign * (wsr * prior[c] + wrs * qa) * dist[c * K + a];
    }
  }

  /** Row s of D: what codeword at[s] loses when sent. */
  rowCost(s: number): number {
    const { size: K, w, dist, at } = this;
    const from = at[s] * K;
    let sum = 0;
    for (let r = 0; r < K; r += 1) sum += w[s * K + r] * dist[from + at[r]];
    return this.prior[at[s]] * sum;
  }

  /** The change of D if slots u and v swapped their codewords. */
  gainOf(u: number, v: number): number {
    const { size: K, w, h, prior, at } = this;
    const x = at[u];
    const y = at[v];
    const qx = prior[x];
    const qy = prior[y];
    const dxy = this.dist[x * K + y];
    const wuu = w[u * K + u];
    const wuv = w[u * K + v];
    const wvu = w[v * K + u];
    const wvv = w[v * K + v];
    const full = h[u * K + y] - h[u * K + x] - h[v * K + y] + h[v * K + x];
    // H's sums run over every r; the terms with r or s in {u, v} are replaced by what the swap really does to them.
    const included = ((wuu - wvu) * qy - (wuv - wvv) * qx + qx * (wuu - wuv) - qy * (wvu - wvv)) * dxy;
    const exact = dxy * ((qy - qx) * wuv + (qx - qy) * wvu);
    return full - included + exact;
  }

  swap(u: number, v: number): void {
    this.addColumn(u, -1);
    this.addColumn(v, -1);
    const a = this.at[u];
    this.at[u] = this.at[v];
    this.at[v] = a;
    this.addColumn(u, 1);
    this.addColumn(v, 1);
  }
}

/**
 * Index assignment for a noisy channel by the binary switching algorithm (Zeger & Gersho 1990, "Pseudo-Gray coding"):
 * take the index whose codeword costs most at the design bit-error rate, try switching it with every other index,
 * make the switch that lowers the expected channel distortion most, and start again; when no switch of an index helps,
 * go on to the next costliest; stop when none helps. Only lowering switches are made, so the distortion never rises;
 * the result is a permutation of the codewords (with their usage), so the noiseless result of every image is the same
 * up to the renaming of indices. Deterministic: ties go to the lower index.
 */
export function assignIndices(codebook: Codebook, p: number): IndexAssignment {
  const K = codebook.size;
  const state = new Switching(codebook, p);
  const before = channelDistortion(codebook, p);
  let swaps = 0;
  if (K > 2) {
    let total = 0;
    for (let s = 0; s < K; s += 1) total += state.rowCost(s);
    let improved = true;
    while (improved) {
      improved = false;
      const costs = Array.from({ length: K }, (_, s) => state.rowCost(s));
      const order = Array.from({ length: K }, (_, s) => s).sort((a, b) => costs[b] - costs[a] || a - b);
      for (const u of order) {
        let best = -REORDER_MIN_GAIN * total;
        let partner = -1;
        for (let v = 0; v < K; v += 1) {
          if (v === u) continue;
          const gain = state.gainOf(u, v);
          if (gain < best) {
            best = gain;
            partner = v;
          }
        }
        if (partner >= 0) {
          state.swap(u, partner);
          total += best;
          swaps += 1;
          improved = true;
          break;
        }
      }
    }
  }
  const d = codebook.dimension;
  const codewords = new Float32Array(K * d);
  const usage = new Uint32Array(K);
  state.at.forEach((old, s) => {
    codewords.set(codebook.codewords.subarray(old * d, (old + 1) * d), s * d);
    usage[s] = codebook.usage[old];
  });
  const reordered = makeCodebook({ size: K, dimension: d, patch: codebook.patch, preprocessing: codebook.preprocessing, codewords, usage, training: codebook.training });
  return { codebook: reordered, order: state.at, before, after: channelDistortion(reordered, p), swaps };
}
