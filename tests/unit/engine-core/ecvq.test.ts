import { afterAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { assignEntropyConstrained, cellCentroids } from '../../../server/engine/core/entropy-constrained';
import { exactDistance } from '../../../server/engine/core/exact-distance';
import { kraftSum } from '../../../server/engine/core/huffman';
import { createRng, shutdownEngineWorkers } from '../../../server/engine/training/index';
import { assignEcvq, ecvqStartingCodebook, sweepEcvq, trainEcvq } from '../../../server/engine/training/ecvq';

afterAll(() => shutdownEngineWorkers());

/** Reference: every codeword's cost in float64, lowest index first on equal costs. */
function bruteForce(vectors: Float32Array, d: number, codewords: Float32Array, penalties: Float64Array) {
  const n = vectors.length / d;
  const indices = new Uint32Array(n);
  const errors = new Float64Array(n);
  for (let v = 0; v < n; v++) {
    let best = Infinity;
    for (let j = 0; j < penalties.length; j++) {
      const e = exactDistance(vectors, v * d, codewords, j * d, d);
      if (e + penalties[j] < best) {
        best = e + penalties[j];
        indices[v] = j;
        errors[v] = e;
      }
    }
  }
  return { indices, errors };
}

function gaussianCloud(seed: number, n: number, d: number): Float32Array {
  const rng = createRng(seed);
  return Float32Array.from({ length: n * d }, () => rng.normal());
}

describe('assignEntropyConstrained', () => {
  it('equals a float64 full search of distance plus penalty, ties to the lowest index, with or without hints (property)', () => {
    fc.assert(fc.property(
      fc.integer({ min: 1, max: 120 }), fc.integer({ min: 1, max: 6 }), fc.integer({ min: 1, max: 40 }), fc.integer({ min: 0, max: 2 ** 31 }), fc.boolean(),
      (n, d, k, seed, hinted) => {
        const rng = createRng(seed);
        // Quantized values and penalties make exact ties common.
        const vectors = Float32Array.from({ length: n * d }, () => rng.nextInt(7) / 2);
        const codewords = Float32Array.from({ length: k * d }, () => rng.nextInt(7) / 2);
        const penalties = Float64Array.from({ length: k }, () => rng.nextInt(4) / 4);
        const indices = Uint32Array.from({ length: n }, () => rng.nextInt(k));
        const errors = new Float64Array(n);
        assignEntropyConstrained(vectors, d, codewords, penalties, indices, errors, hinted);
        const ref = bruteForce(vectors, d, codewords, penalties);
        expect(Array.from(indices)).toEqual(Array.from(ref.indices));
        expect(Array.from(errors)).toEqual(Array.from(ref.errors));
      },
    ), { numRuns: 300 });
  });

  it('equals a float64 full search on data far from the origin, where the projections round the most (property)', () => {
    fc.assert(fc.property(
      fc.integer({ min: 1, max: 80 }), fc.integer({ min: 1, max: 24 }), fc.integer({ min: 1, max: 60 }), fc.integer({ min: 0, max: 2 ** 31 }),
      fc.constantFrom(0, 1e3, 1e5), fc.constantFrom(1e-3, 1, 30),
      (n, d, k, seed, offset, spread) => {
        const rng = createRng(seed);
        const vectors = Float32Array.from({ length: n * d }, () => offset + spread * rng.normal());
        // Codewords copy some vectors exactly (zero distances) and sit near others.
        const codewords = Float32Array.from({ length: k * d }, (_, i) => (rng.nextInt(3) === 0 && i < n * d ? vectors[i] : offset + spread * rng.normal()));
        const penalties = Float64Array.from({ length: k }, () => rng.next() * spread * spread * d);
        const indices = new Uint32Array(n);
        const errors = new Float64Array(n);
        assignEntropyConstrained(vectors, d, codewords, penalties, indices, errors, false);
        const ref = bruteForce(vectors, d, codewords, penalties);
        expect(Array.from(indices)).toEqual(Array.from(ref.indices));
        expect(Array.from(errors)).toEqual(Array.from(ref.errors));
      },
    ), { numRuns: 300 });
  });

  it('moves vectors towards cheaper cells as the penalty gap grows', () => {
    // Two codewords at 0 and 1; x = 0.4 is nearer 0 (0.16 against 0.36) until codeword 0 costs 0.2 more.
    const vectors = Float32Array.of(0.4);
    const codewords = Float32Array.of(0, 1);
    const run = (p0: number) => {
      const indices = new Uint32Array(1);
      assignEntropyConstrained(vectors, 1, codewords, Float64Array.of(p0, 0), indices, new Float64Array(1), false);
      return indices[0];
    };
    expect(run(0.1)).toBe(0);
    expect(run(0.3)).toBe(1);
  });
});

describe('cellCentroids', () => {
  it('averages each cell in float64 and rounds to float32', () => {
    const vectors = Float32Array.of(1, 2, 0.1, 0.2, 5, 5);
    const out = cellCentroids(vectors, 2, Uint32Array.of(0, 0, 1), 2);
    expect(Array.from(out)).toEqual([Math.fround((1 + 0.1000000014901161) / 2), Math.fround((2 + 0.20000000298023224) / 2), 5, 5]);
  });
});

describe('trainEcvq', () => {
  const d = 2;
  const vectors = gaussianCloud(3, 3000, d);
  const start = (async () => ecvqStartingCodebook(vectors, d, { size: 32, init: 'kmeans++', seed: 4, maxIterations: 20 }))();

  it('gives the same bits for the same inputs', async () => {
    const a = await trainEcvq(vectors, d, await start, { lambda: 0.3 });
    const b = await trainEcvq(vectors, d, await start, { lambda: 0.3 });
    expect(Buffer.from(a.codewords.buffer).equals(Buffer.from(b.codewords.buffer))).toBe(true);
    expect(a.usage).toEqual(b.usage);
    expect(a.distortion).toBe(b.distortion);
    expect(a.trace.map((s) => s.lagrangian)).toEqual(b.trace.map((s) => s.lagrangian));
  });

  it('never raises the Lagrangian from one iteration to the next up to the codebook it returns', async () => {
    const r = await trainEcvq(vectors, d, await start, { lambda: 0.5, epsilon: 0, maxIterations: 200 });
    const kept = r.trace.slice(0, r.iterations + 1);
    for (let t = 1; t < kept.length; t++) expect(kept[t].lagrangian).toBeLessThanOrEqual(kept[t - 1].lagrangian);
    expect(r.lagrangian).toBe(kept[kept.length - 1].lagrangian);
  });

  it('reports the figures of its own codebook: at a fixed point, encoding the training set again gives the same usage and distortion', async () => {
    const r = await trainEcvq(vectors, d, await start, { lambda: 0.4, epsilon: 0, maxIterations: 1000 });
    expect(r.stop).toBe('fixed-point');
    const ideal = Array.from(r.usage, (c) => -Math.log2(c / 3000));
    const again = assignEcvq(vectors, d, r.codewords, ideal, r.lambda);
    const usage = new Uint32Array(r.size);
    for (const j of again.indices) usage[j]++;
    expect(usage).toEqual(r.usage);
    expect(again.errors.reduce((s, e) => s + e, 0) / (3000 * d)).toBe(r.distortion);
    // The codewords are their cells' centroids.
    expect(cellCentroids(vectors, d, again.indices, r.size)).toEqual(r.codewords);
  });

  it('drops cells as λ grows, keeps the survivors\' starting indices, and prices them with a complete code', async () => {
    const results = await sweepEcvq(vectors, d, await start, [0, 0.2, 0.5]);
    const sizes = results.map((r) => r.size);
    expect(sizes[0]).toBe(32);
    expect(sizes[1]).toBeLessThan(sizes[0]);
    expect(sizes[2]).toBeLessThan(sizes[1]);
    expect(results[2].entropy).toBeLessThan(results[1].entropy);
    expect(results[2].distortion).toBeGreaterThan(results[1].distortion);
    for (const r of results) {
      expect(r.usage.reduce((s, c) => s + c, 0)).toBe(3000);
      expect(Math.min(...r.usage)).toBeGreaterThan(0);
      expect(r.codewords.length).toBe(r.size * d);
      for (let j = 1; j < r.size; j++) expect(r.origin[j]).toBeGreaterThan(r.origin[j - 1]);
      expect(kraftSum(r.codeLengths)).toBe(1);
      // An optimal prefix code's mean length lies in [H, H + 1) (Shannon's source coding theorem; common practice).
      expect(r.codedBitsPerVector).toBeGreaterThanOrEqual(r.entropy - 1e-12);
      expect(r.codedBitsPerVector).toBeLessThan(r.entropy + 1);
    }
  });

  it('gives the same result from a sweep as from one run per λ', async () => {
    const [swept] = await sweepEcvq(vectors, d, await start, [0.7]);
    const single = await trainEcvq(vectors, d, await start, { lambda: 0.7 });
    expect(swept.codewords).toEqual(single.codewords);
    expect(swept.usage).toEqual(single.usage);
  });

  it('collapses to the centroid of everything with a 1-bit code when bits cost far more than any error', async () => {
    const r = await trainEcvq(vectors, d, await start, { lambda: 1e6 });
    expect(r.size).toBe(1);
    expect(r.entropy).toBe(0);
    expect(Array.from(r.codeLengths)).toEqual([1]);
    expect(r.codedBitsPerVector).toBe(1);
  });

  it('refuses a negative λ, a starting codebook too large for the code, a bad dimension and a cancelled signal', async () => {
    const codebook = await start;
    await expect(trainEcvq(vectors, d, codebook, { lambda: -1 })).rejects.toMatchObject({ code: 'ENGINE_INVALID_INPUT' });
    await expect(trainEcvq(vectors, d, codebook, { lambda: 1, maxCodeLength: 4 })).rejects.toMatchObject({ code: 'ENGINE_INVALID_INPUT' });
    await expect(trainEcvq(vectors, 3, codebook, { lambda: 1 })).rejects.toMatchObject({ code: 'ENGINE_INVALID_INPUT' });
    await expect(sweepEcvq(vectors, d, codebook, [])).rejects.toMatchObject({ code: 'ENGINE_INVALID_INPUT' });
    const controller = new AbortController();
    controller.abort();
    await expect(trainEcvq(vectors, d, codebook, { lambda: 1, signal: controller.signal })).rejects.toMatchObject({ name: 'AbortError' });
  });

  it('stops when cancelled between iterations', async () => {
    const controller = new AbortController();
    const run = trainEcvq(vectors, d, await start, {
      lambda: 0.2, epsilon: 0, maxIterations: 10_000, signal: controller.signal,
      onIteration: (s) => { if (s.iteration === 2) controller.abort(); },
    });
    await expect(run).rejects.toMatchObject({ name: 'AbortError' });
  });
});

describe('assignEcvq', () => {
  it('never chooses a cell without a code', () => {
    const vectors = Float32Array.of(0, 0.1, 5);
    const codewords = Float32Array.of(0, 5);
    const { indices } = assignEcvq(vectors, 1, codewords, [0, 3], 0.01);
    expect(Array.from(indices)).toEqual([1, 1, 1]);
    expect(() => assignEcvq(vectors, 1, codewords, [0, 0], 0.01)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_INPUT' }));
    expect(() => assignEcvq(vectors, 1, codewords, [1], 0.01)).toThrow(expect.objectContaining({ code: 'ENGINE_INVALID_INPUT' }));
  });
});
