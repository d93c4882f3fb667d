import { afterAll, describe, expect, it } from 'vitest';
import { kmeans } from 'ml-kmeans';
import { assign, createRng, shutdownEngineWorkers, train } from '../../server/engine/training/index';

// Agreement with an independent general-purpose implementation: the `ml-kmeans` package
// (v7, npm), plain Lloyd iterations in float64 with nearest search by strict "<" (lowest
// index on ties). Started from the same codewords, both must make the same partitions.

afterAll(() => shutdownEngineWorkers());

/** Well-separated Gaussian blobs so that no cell empties (ml-kmeans keeps empty ones). */
function blobs(n: number, d: number, centers: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const means = Array.from({ length: centers }, () => Array.from({ length: d }, () => rng.next() * 40));
  const out = new Float32Array(n * d);
  for (let v = 0; v < n; v++) {
    const m = means[v % centers];
    for (let i = 0; i < d; i++) out[v * d + i] = m[i] + rng.normal() * 3;
  }
  return out;
}

const rows = (a: Float32Array, d: number) =>
  Array.from({ length: a.length / d }, (_, v) => Array.from(a.subarray(v * d, (v + 1) * d)));

function distortionOf(data: number[][], centroids: number[][], clusters: number[]): number {
  let s = 0;
  for (let v = 0; v < data.length; v++) {
    const c = centroids[clusters[v]];
    for (let i = 0; i < c.length; i++) s += (data[v][i] - c[i]) ** 2;
  }
  return s / (data.length * data[0].length);
}

describe('agreement with ml-kmeans', () => {
  for (const [n, d, k, iterations] of [[4000, 4, 8, 1], [4000, 4, 8, 6], [6000, 12, 16, 10], [3000, 3, 24, 8]]) {
    it(`makes the same partition and distortion after ${iterations} iterations (N=${n}, d=${d}, K=${k})`, async () => {
      const vectors = blobs(n, d, k, n + d + k);
      const start = (await train(vectors, d, { k, init: 'random', seed: 3, maxIterations: 0 })).codebooks[0].codewords;
      const data = rows(vectors, d);

      // tolerance −1: ml-kmeans stops only at maxIterations, like epsilon 0 here.
      const ml = kmeans(data, k, { initialization: rows(start, d), maxIterations: iterations, tolerance: -1 });
      const ours = (await train(vectors, d, { k, init: 'random', initialCodewords: start, epsilon: 0, maxIterations: iterations }))
        .codebooks[0];
      expect(ours.iterations).toBe(iterations);

      // ml-kmeans' `clusters` is the partition its last centroid update was computed from,
      // i.e. the nearest-codeword partition after iterations − 1 updates.
      const before = iterations === 1
        ? start
        : (await train(vectors, d, { k, init: 'random', initialCodewords: start, epsilon: 0, maxIterations: iterations - 1 }))
            .codebooks[0].codewords;
      const ourPartition = await assign(vectors, d, before);
      expect(Array.from(ourPartition.indices)).toEqual(ml.clusters);

      // Centroids: ours are the same float64 means rounded to float32 (relative 2^-24).
      for (let j = 0; j < k; j++) {
        for (let i = 0; i < d; i++) {
          const theirs = ml.centroids[j][i];
          expect(Math.abs(ours.codewords[j * d + i] - theirs)).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(theirs)));
        }
      }
      // Distortion of the final codebooks, each with its own nearest search, within 1e-6.
      const mlFinal = ml.nearest(data);
      const theirsD = distortionOf(data, ml.centroids, mlFinal);
      expect(Math.abs(ours.distortion - theirsD) / theirsD).toBeLessThan(1e-6);
      const final = await assign(vectors, d, ours.codewords);
      expect(Array.from(final.indices)).toEqual(mlFinal);
    });
  }
});
