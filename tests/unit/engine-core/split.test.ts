import { afterAll, describe, expect, it } from 'vitest';
import { exactDistance } from '../../../server/engine/core/exact-distance';
import { runLloyd, type LloydContext } from '../../../server/engine/core/lloyd';
import { SPLIT_POWER_STEPS, splitAlongPrincipalDirections, splitCodebook, splitStartDirection } from '../../../server/engine/core/split';
import type { ShardExecutor, TrainedCodebook } from '../../../server/engine/core/types';
import { openLocalShards } from '../../../server/engine/training/local-shards';
import { bruteForceAssign, createRng, shutdownEngineWorkers, train } from '../../../server/engine/training/index';

afterAll(() => shutdownEngineWorkers());

/**
 * A first-order Gauss–Markov (AR(1)) source: x_i = ρ·x_{i−1} + √(1 − ρ²)·w_i, unit variance, ρ = 0.9 — the test source
 * of the VQ literature (Gersho & Gray 1992, ch. 11 and 16). N × d, row-major.
 */
function gaussMarkov(n: number, d: number, seed: number, rho = 0.9): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * d);
  const g = Math.sqrt(1 - rho * rho);
  for (let v = 0; v < n; v++) {
    let x = rng.normal();
    out[v * d] = x;
    for (let i = 1; i < d; i++) {
      x = rho * x + g * rng.normal();
      out[v * d + i] = x;
    }
  }
  return out;
}

/** Codebook of size K from a Lloyd run on the shards (their last pass is then this codebook's partition). */
async function converged(shards: ShardExecutor, d: number, n: number, start: Float32Array, k: number): Promise<TrainedCodebook> {
  const ctx: LloydContext = { d, n, shards, epsilon: 1e-4, maxIterations: 100 };
  return runLloyd(ctx, start.slice(), k);
}

/**
 * The principal split written out plainly over the whole set (one shard, so the shard fold is the plain sum in
 * vector order): for each cell, power iteration u ← S u/‖S u‖ from the fixed start with S the scatter about the
 * codeword, then the centroids of the two sides of the hyperplane through the codeword normal to u.
 */
function plainPrincipalSplit(vectors: Float32Array, d: number, book: TrainedCodebook): Float32Array {
  const k = book.size;
  const { indices } = bruteForceAssign(vectors, d, book.codewords);
  const out = new Float32Array(2 * k * d);
  out.set(book.codewords);
  for (let j = 0; j < k; j++) {
    const c = Array.from(book.codewords.subarray(j * d, (j + 1) * d));
    const members: number[][] = [];
    for (let v = 0; v < indices.length; v++) if (indices[v] === j) members.push(Array.from(vectors.subarray(v * d, (v + 1) * d)));
    const project = (x: number[], u: Float64Array) => x.reduce((t, xi, i) => t + (xi - c[i]) * u[i], 0);
    let u = splitStartDirection(d);
    for (let step = 0; step < SPLIT_POWER_STEPS; step++) {
      const w = new Float64Array(d);
      for (const x of members) {
        const t = project(x, u);
        for (let i = 0; i < d; i++) w[i] += (x[i] - c[i]) * t;
      }
      const norm = Math.sqrt(w.reduce((a, b) => a + b * b, 0));
      u = w.map((wi) => wi / norm);
    }
    const upper = members.filter((x) => project(x, u) > 0);
    const lower = members.filter((x) => !(project(x, u) > 0));
    const mean = (xs: number[][]) => Array.from({ length: d }, (_, i) => xs.reduce((a, x) => a + x[i], 0) / xs.length);
    out.set(mean(upper), j * d);
    out.set(mean(lower), (k + j) * d);
  }
  return out;
}

describe('principal split', () => {
  it('equals the plainly written rule: power iteration on each cell, then the centroids of its two halves', async () => {
    const d = 4;
    const n = 6_000; // one shard
    const vectors = gaussMarkov(n, d, 3);
    const shards = await openLocalShards(vectors, d, { threads: 1, maxK: 8 });
    try {
      const first = await converged(shards, d, n, new Float32Array([...vectors.subarray(0, 4 * d)]), 4);
      const split = await splitAlongPrincipalDirections(first, d, 8, shards);
      expect(Array.from(split)).toEqual(Array.from(plainPrincipalSplit(vectors, d, first)));
    } finally {
      await shards.close();
    }
  });

  it('separates the two halves of mean-removed data, which the constant direction (1, …, 1) cannot see', async () => {
    // Two patterns of zero mean (a horizontal edge and its negative) with noise, each vector's own mean removed, as
    // a mean-removed VQ trains. (1, …, 1) is orthogonal to every such vector, so c ± δσ·(1, …, 1) are equally far
    // from both patterns and the old split tells them apart only by noise.
    const d = 16;
    const n = 4_000;
    const rng = createRng(11);
    const vectors = new Float32Array(n * d);
    const side = (v: number) => (v % 2 === 0 ? 1 : -1);
    for (let v = 0; v < n; v++) {
      let mean = 0;
      for (let i = 0; i < d; i++) {
        const x = side(v) * (i < 8 ? 20 : -20) + rng.normal() * 5;
        vectors[v * d + i] = x;
        mean += x;
      }
      for (let i = 0; i < d; i++) vectors[v * d + i] -= mean / d;
    }
    const shards = await openLocalShards(vectors, d, { threads: 1, maxK: 2 });
    try {
      const centroid = new Float32Array(d);
      for (let v = 0; v < n; v++) for (let i = 0; i < d; i++) centroid[i] += vectors[v * d + i] / n;
      const book = await converged(shards, d, n, centroid, 1);
      const separates = (codewords: Float32Array) => {
        const nearest = (v: number) => (exactDistance(vectors, v * d, codewords, 0, d) <= exactDistance(vectors, v * d, codewords, d, d) ? 0 : 1);
        const first = nearest(0);
        for (let v = 0; v < n; v++) if (nearest(v) !== (side(v) === 1 ? first : 1 - first)) return false;
        return true;
      };
      expect(separates(await splitAlongPrincipalDirections(book, d, 2, shards))).toBe(true);
      expect(separates(splitCodebook(book, d, 2, 0.01))).toBe(false);
    } finally {
      await shards.close();
    }
  });

  it('trains every ladder size within 1 % of the former split along (1, …, 1) on a Gauss–Markov source', async () => {
    // The former rule, c ± δσ·(1, …, 1) with δ = 0.01, then Lloyd with the same stop rule at every size. On this
    // source (d = 4, ρ = 0.9) the two ladders end in different local minima of Lloyd's iteration within a percent
    // of each other (measured: equal up to K = 4; 1.0007 at K = 16, 1.0069 at K = 32):
    // the new rule is no better here, so this is a guard against a broken split, not a claim of a gain. The gain is
    // on mean-removed data (above) and on image patches (npm run bench).
    const d = 4;
    const n = 20_000;
    const vectors = gaussMarkov(n, d, 5);
    const now = await train(vectors, d, { k: 64, init: 'split', epsilon: 1e-4, threads: 1 });
    const shards = await openLocalShards(vectors, d, { threads: 1, maxK: 64 });
    const former: number[] = [];
    try {
      const centroid = new Float32Array(d);
      for (let v = 0; v < n; v++) for (let i = 0; i < d; i++) centroid[i] += vectors[v * d + i];
      for (let i = 0; i < d; i++) centroid[i] /= n;
      let book = await converged(shards, d, n, centroid, 1);
      former.push(book.distortion);
      for (let k = 2; k <= 64; k *= 2) {
        book = await converged(shards, d, n, splitCodebook(book, d, k, 0.01), k);
        former.push(book.distortion);
      }
    } finally {
      await shards.close();
    }
    const ours = now.codebooks.map((b) => b.distortion);
    expect(ours.length).toBe(former.length);
    for (let s = 1; s < ours.length; s++) expect(ours[s], `size ${2 ** s}`).toBeLessThanOrEqual(former[s] * 1.01);
  });
});
