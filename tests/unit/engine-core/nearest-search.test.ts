import { afterAll, describe, expect, it } from 'vitest';
import { bruteForceAssign, createRng, shutdownEngineWorkers, threadBudget } from '../../../server/engine/training/index';
import { NearestSearch, boundLayout, sharedVectors } from '../../../server/engine/parallel/nearest-search';
import { train } from '../../../server/engine/training/index';
import { NearestKernel } from '../../../server/engine/wasm/kernel';
import { accumulateCentroids } from '../../../server/engine/core/accumulate-centroids';

// Reference throughout: float64 brute force, first minimum wins (the engine's definition).

afterAll(() => shutdownEngineWorkers());

describe('NearestSearch', () => {
  for (const threads of [1, threadBudget.total]) {
    it(`keeps full-search results while codewords drift between passes (threads = ${threads})`, async () => {
      const rng = createRng(21);
      const n = 12_000;
      const d = 12;
      const k = 64;
      const vectors = new Float32Array(n * d).map(() => Math.round(rng.normal() * 20) / 4);
      const codewords = vectors.slice(0, k * d);
      const search = await NearestSearch.open(vectors, d, { threads, maxK: k });
      try {
        // Large enough that even a one-thread lease runs on a worker.
        expect(search.threads).toBe(threads);
        let searchedLater = Infinity;
        // Moves shrink pass by pass, as in Lloyd iterations, so the bound test starts to skip.
        for (let pass = 0; pass < 8; pass++) {
          const step = 2 / (1 + pass * pass);
          for (let i = 0; i < codewords.length; i++) codewords[i] += Math.round(rng.normal() * step * 8) / 16;
          const stats = await search.run(codewords, k);
          const ref = bruteForceAssign(vectors, d, codewords);
          expect(Array.from(search.indices)).toEqual(Array.from(ref.indices));
          expect(Array.from(search.distances)).toEqual(Array.from(ref.distances));
          if (pass === 0) expect(stats.searched).toBe(n);
          else searchedLater = Math.min(searchedLater, stats.searched);
        }
        expect(searchedLater).toBeLessThan(n);
      } finally {
        search.close();
      }
    });
  }

  it('bounds groups of several blocks once per-block bounds would outgrow the vectors (worked example)', () => {
    // Per block of 16 the table would be N × 32 float32, 8× the vectors (N × 4 float32); groups of two blocks
    // give 16 per vector, 4× the vectors, the limit.
    expect(boundLayout(12_000, 4, 512)).toEqual({ groupShift: 1, bytes: 12_000 * 16 * 4 });
    // K ≤ 64·d keeps one bound per block of 16.
    expect(boundLayout(12_000, 16, 1024)).toEqual({ groupShift: 0, bytes: 12_000 * 64 * 4 });
    // Groups so large that fewer than a handful remain are not worth keeping: every pass runs in full.
    expect(boundLayout(12_000, 1, 4096).bytes).toBe(0);
  });

  // Two shapes: 16 groups of 2 blocks searched on workers, and 8 groups of 4 blocks small enough to stay on this thread.
  const groupedCases = [
    { threads: 1, n: 12_000, d: 4, workers: 1 },
    { threads: threadBudget.total, n: 12_000, d: 4, workers: threadBudget.total },
    { threads: 1, n: 3_000, d: 2, workers: 0 },
  ];
  for (const { threads, n, d, workers } of groupedCases) {
    it(`keeps full-search results with grouped bounds on near-tie data, K > 64·d (d = ${d}, worker threads: ${workers})`, async () => {
      const rng = createRng(33);
      const k = 512;
      expect(boundLayout(n, d, k).groupShift).toBeGreaterThan(0);
      // Small integers: many vectors lie at exactly equal distances from several codewords on the same grid.
      const vectors = new Float32Array(n * d).map(() => Math.round(rng.normal() * 3));
      const codewords = new Float32Array(k * d).map(() => Math.round(rng.normal() * 6) / 2);
      const search = await NearestSearch.open(vectors, d, { threads, maxK: k });
      try {
        expect(search.threads).toBe(workers);
        let searchedLater = Infinity;
        for (let pass = 0; pass < 8; pass++) {
          const step = 2 / (1 + pass * pass);
          for (let i = 0; i < codewords.length; i++) codewords[i] += Math.round(rng.normal() * step * 8) / 16;
          // Exact duplicates far apart in index (so in different groups): ties go to the lower index.
          for (let j = 0; j < 32; j++) codewords.copyWithin((k - 1 - j) * d, j * 7 * d, (j * 7 + 1) * d);
          const stats = await search.run(codewords, k);
          const ref = bruteForceAssign(vectors, d, codewords);
          expect(Array.from(search.indices)).toEqual(Array.from(ref.indices));
          expect(Array.from(search.distances)).toEqual(Array.from(ref.distances));
          if (pass > 0) searchedLater = Math.min(searchedLater, stats.searched);
        }
        // The grouped bounds are in use: some vectors scan only their own group.
        expect(searchedLater).toBeLessThan(n);
      } finally {
        search.close();
      }
    });
  }

  it('forms the same centroids on the workers as on one thread, bit for bit', async () => {
    const rng = createRng(5);
    const n = 60_000;
    const d = 12;
    const k = 300;
    const vectors = new Float32Array(n * d).map(() => rng.normal() * 100);
    const search = await NearestSearch.open(vectors, d, { threads: threadBudget.total, maxK: k });
    try {
      await search.run(vectors.slice(0, k * d), k);
      const parallel = vectors.slice(0, k * d);
      const counts = await search.accumulate(parallel, k);
      const single = vectors.slice(0, k * d);
      const singleCounts = accumulateCentroids(vectors, d, search.indices, single, k);
      expect(Array.from(counts)).toEqual(Array.from(singleCounts));
      expect(Array.from(new Uint32Array(parallel.buffer))).toEqual(Array.from(new Uint32Array(single.buffer)));
    } finally {
      search.close();
    }
  });

  it('ignores caller edits to its published indices', async () => {
    const vectors = new Float32Array([0, 1, 2, 10, 11, 12]);
    const codewords = new Float32Array([0, 11]);
    const search = await NearestSearch.open(vectors, 1, { threads: 1 });
    try {
      await search.run(codewords, 2);
      search.indices.fill(1);
      search.distances.fill(0);
      await search.run(codewords, 2);
      expect(Array.from(search.indices)).toEqual([0, 0, 0, 1, 1, 1]);
      expect(Array.from(search.distances)).toEqual([0, 1, 4, 1, 0, 1]);
    } finally {
      search.close();
    }
  });
});

describe('NearestKernel with extreme magnitudes', () => {
  it('falls back to the exact search where float32 would overflow', () => {
    // 1e20² overflows float32 (max ≈ 3.4e38, IEEE 754 binary32), not float64.
    const vectors = new Float32Array([1e20, 0, -1e20, 5e19, 1, 2]);
    const codewords = new Float32Array([-9e19, 0, 9e19, 0, 0, 0]);
    const kernel = new NearestKernel();
    kernel.setCodebook(codewords, 3, 2);
    const idx = new Uint32Array(3);
    const dist = new Float64Array(3);
    kernel.assignRange(vectors, 0, 3, idx, dist);
    const ref = bruteForceAssign(vectors, 2, codewords);
    expect(Array.from(idx)).toEqual(Array.from(ref.indices));
    expect(Array.from(dist)).toEqual(Array.from(ref.distances));
    expect(Array.from(idx)).toEqual([1, 0, 2]);
  });

  it('trains to the same codewords, bit for bit, from vectors already in shared memory', async () => {
    const rng = createRng(17);
    const d = 16;
    const plain = new Float32Array(40_000 * d).map(() => Math.round(rng.normal() * 30));
    const shared = sharedVectors(plain);
    expect(shared.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(sharedVectors(shared)).toBe(shared);
    expect(Array.from(shared)).toEqual(Array.from(plain));
    const options = { k: 64, init: 'kmeans++' as const, seed: 4, maxIterations: 6 };
    const [a, b] = [await train(plain, d, options), await train(shared, d, options)];
    expect(Buffer.from(b.codebooks[0].codewords.buffer).equals(Buffer.from(a.codebooks[0].codewords.buffer))).toBe(true);
  });
});
