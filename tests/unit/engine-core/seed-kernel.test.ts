import { describe, expect, it } from 'vitest';
import { createRng } from '../../../server/engine/training/index';
import { distancesToNewest, plainSeedState, seedUpdateWithTotal, vectorNormsInto } from '../../../server/engine/core/init';
import { SeedKernel } from '../../../server/engine/wasm/seed-kernel';

/**
 * The k-means++ D² update written out plainly (Arthur & Vassilvitskii, "k-means++: The Advantages of Careful Seeding",
 * SODA 2007): each vector's squared distance to codeword c, Σ (x_i − c_i)² in float64 in component order, replaces its
 * D² when strictly smaller (ties keep the earlier codeword); the total is the D² added in vector order in float64.
 */
function referenceStep(vectors: Float32Array, d: number, codeword: Float32Array, c: number, minDist: Float64Array, nearest: Uint32Array): number {
  let total = 0;
  for (let v = 0; v < minDist.length; v++) {
    let s = 0;
    for (let i = 0; i < d; i++) {
      const t = vectors[v * d + i] - codeword[i];
      s += t * t;
    }
    if (s < minDist[v]) {
      minDist[v] = s;
      nearest[v] = c;
    }
    total += minDist[v];
  }
  return total;
}

/** Runs K steps with the kernel, the JS update and the plain reference side by side, comparing every bit after each. */
function compareSteps(vectors: Float32Array, d: number, codewords: Float32Array, k: number): void {
  const n = vectors.length / d;
  const kernel = new SeedKernel(vectors, d, k);
  kernel.state.minDist.fill(Infinity);
  kernel.state.nearest.fill(0);
  const js = plainSeedState(n, k, d);
  js.minDist.fill(Infinity);
  const norms = new Float64Array(n);
  vectorNormsInto(vectors, d, norms);
  const refMin = new Float64Array(n).fill(Infinity);
  const refNearest = new Uint32Array(n);
  let moved = 0;
  for (let c = 0; c < k; c++) {
    const row = codewords.subarray(c * d, (c + 1) * d);
    const before = Float64Array.from(refMin);
    for (const state of [kernel.state, js]) {
      state.codewords.set(row, c * d);
      distancesToNewest(state.codewords, c, d, state.fromNewest);
    }
    const total = kernel.step(c);
    const jsTotal = seedUpdateWithTotal(vectors, d, js, norms, c);
    const refTotal = referenceStep(vectors, d, row, c, refMin, refNearest);
    expect(Object.is(total, refTotal)).toBe(true);
    expect(Object.is(jsTotal, refTotal)).toBe(true);
    // Byte comparison: equal bits, not merely equal values.
    expect(Buffer.from(kernel.state.minDist.buffer, kernel.state.minDist.byteOffset, n * 8).equals(Buffer.from(refMin.buffer))).toBe(true);
    expect(Array.from(kernel.state.nearest)).toEqual(Array.from(refNearest));
    const changed = Array.from(kernel.changed());
    expect(changed).toEqual(Array.from({ length: n }, (_, v) => v).filter((v) => refMin[v] !== before[v]));
    moved += changed.length;
  }
  // The steps did something beyond the first codeword.
  expect(moved).toBeGreaterThan(n);
}

describe('SeedKernel (k-means++ D² update in the WebAssembly kernel)', () => {
  it('gives the D², nearest codewords and totals of the plain float64 rule on random data of several widths', () => {
    for (const [seed, n, d, k] of [[1, 1100, 16, 40], [2, 1037, 7, 30], [3, 513, 3, 25], [4, 600, 1, 20], [5, 300, 33, 20]] as const) {
      const rng = createRng(seed);
      const vectors = new Float32Array(n * d).map(() => Math.fround((rng.next() - 0.5) * 510));
      // Codewords: training vectors (as k-means++ draws them) and a few that are not.
      const codewords = new Float32Array(k * d);
      for (let c = 0; c < k; c++) {
        if (c % 5 === 4) for (let i = 0; i < d; i++) codewords[c * d + i] = Math.fround(rng.next() * 300);
        else {
          const v = rng.nextInt(n);
          codewords.set(vectors.subarray(v * d, (v + 1) * d), c * d);
        }
      }
      compareSteps(vectors, d, codewords, k);
    }
  });

  it('keeps the earlier codeword on exact ties and leaves repeated vectors at distance 0', () => {
    // Integer grid points: many vectors lie exactly as far from two codewords, and the set holds each point three times.
    const d = 4;
    const points: number[] = [];
    for (let r = 0; r < 3; r++) for (let a = 0; a < 6; a++) for (let b = 0; b < 6; b++) for (let e = 0; e < 4; e++) points.push(a, b, e, (a + b) % 3);
    const vectors = Float32Array.from(points);
    const grid = [[0, 0, 0, 0], [2, 0, 0, 0], [0, 2, 0, 0], [2, 2, 0, 0], [1, 1, 0, 2], [4, 4, 3, 1], [5, 0, 2, 2], [0, 5, 1, 2], [3, 3, 0, 0]];
    compareSteps(vectors, d, Float32Array.from(grid.flat()), grid.length);
  });

  it('gives the plain rule bits on large and mixed magnitudes, where the float64 differences round', () => {
    const rng = createRng(7);
    const d = 6;
    const n = 700;
    // Components up to ±1e30 next to tiny ones: x − c in float64 is inexact and the squares span many binades.
    const scale = [1e30, 1e-30, 3e15, 1, 7e-8, 2e20];
    const vectors = new Float32Array(n * d).map((_, i) => Math.fround((rng.next() - 0.5) * scale[(i + Math.floor(i / d)) % scale.length]));
    const k = 24;
    const codewords = new Float32Array(k * d);
    for (let c = 0; c < k; c++) {
      const v = rng.nextInt(n);
      codewords.set(vectors.subarray(v * d, (v + 1) * d), c * d);
    }
    compareSteps(vectors, d, codewords, k);
  });
});
