import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { accumulateCentroids, cellStatistics } from '../../../server/engine/core/accumulate-centroids';
import { repairEmptyCells } from '../../../server/engine/core/repair-empty-cells';
import { splitCodebook } from '../../../server/engine/core/split';
import { bruteForceAssign, exactDistance } from '../../../server/engine/core/exact-distance';
import { NearestKernel } from '../../../server/engine/wasm/kernel';

describe('NearestKernel', () => {
  it('equals a float64 brute-force search for any shape (property)', () => {
    // Reference: float64 brute force, first minimum wins (the engine's definition).
    const kernel = new NearestKernel();
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 300 }),
        fc.integer({ min: 1, max: 21 }),
        fc.integer({ min: 1, max: 70 }),
        fc.integer({ min: 0, max: 2 ** 31 }),
        fc.constantFrom(1, 3, 1000),
        (n, d, k, seed, scale) => {
          let s = seed;
          const r = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 2 ** 32);
          // Quantized values make exact ties common.
          const vectors = new Float32Array(n * d).map(() => Math.round(r() * 6) * scale / 3);
          const codewords = new Float32Array(k * d).map(() => Math.round(r() * 6) * scale / 3);
          const ref = bruteForceAssign(vectors, d, codewords);
          const idx = new Uint32Array(n);
          const dist = new Float64Array(n);
          kernel.setCodebook(codewords, k, d);
          kernel.assignRange(vectors, 0, n, idx, dist);
          expect(Array.from(idx)).toEqual(Array.from(ref.indices));
          expect(Array.from(dist)).toEqual(Array.from(ref.distances));
        },
      ),
      { numRuns: 150 },
    );
  });

  it('writes only the requested range', () => {
    const kernel = new NearestKernel();
    const vectors = new Float32Array([0, 0, 10, 10, 5, 5, 9, 9]);
    kernel.setCodebook(new Float32Array([0, 0, 10, 10]), 2, 2);
    const idx = new Uint32Array(4).fill(7);
    const dist = new Float64Array(4).fill(-1);
    kernel.assignRange(vectors, 1, 3, idx, dist);
    // Worked by hand: (10,10) → 1 at 0; (5,5) ties at 50 → 0.
    expect(Array.from(idx)).toEqual([7, 1, 0, 7]);
    expect(Array.from(dist)).toEqual([-1, 0, 50, -1]);
  });
});

describe('exactDistance', () => {
  it('sums squared differences in float64 (worked example)', () => {
    // (1 − 4)² + (2 − 6)² = 25; float32 inputs, float64 result.
    expect(exactDistance(new Float32Array([1, 2]), 0, new Float32Array([4, 6]), 0, 2)).toBe(25);
    // 0.1f and 0.2f differ by exactly 0.1f (as doubles) squared: no float32 rounding.
    const a = new Float32Array([0.1]);
    const b = new Float32Array([0.2]);
    expect(exactDistance(a, 0, b, 0, 1)).toBe((b[0] - a[0]) ** 2);
  });
});

describe('accumulateCentroids', () => {
  it('averages each cell in float64 (worked example)', () => {
    const vectors = new Float32Array([1, 2, 3, 4, 5, 6, 100, 200]);
    const indices = new Uint32Array([0, 0, 0, 1]);
    const codewords = new Float32Array([9, 9, 9, 9, 7, 7]);
    const counts = accumulateCentroids(vectors, 2, indices, codewords, 3);
    // (1+3+5)/3 = 3, (2+4+6)/3 = 4; cell 2 is empty and keeps its codeword.
    expect(Array.from(codewords)).toEqual([3, 4, 100, 200, 7, 7]);
    expect(Array.from(counts)).toEqual([3, 1, 0]);
  });

  it('reports usage and per-cell error of an assignment', () => {
    const s = cellStatistics(new Uint32Array([1, 1, 0]), new Float64Array([2, 3, 4]), 3);
    expect(Array.from(s.usage)).toEqual([1, 2, 0]);
    expect(Array.from(s.cellDistortion)).toEqual([4, 5, 0]);
    expect(s.total).toBe(9);
  });
});

/**
 * repairEmptyCells over one in-memory partition: the donor's members worst first (largest distance, lowest index on
 * ties) by a plain scan, and the moves applied to the arrays, as a single shard would.
 */
async function repairArrays(indices: Uint32Array, distances: Float64Array, usage: Uint32Array, cellDistortion: Float64Array): Promise<number> {
  const taken = new Set<number>();
  const moves = await repairEmptyCells(usage, cellDistortion, async (cell) => {
    let pick = -1;
    for (let v = 0; v < indices.length; v++) {
      if (indices[v] === cell && !taken.has(v) && (pick < 0 || distances[v] > distances[pick])) pick = v;
    }
    taken.add(pick);
    return { index: pick, distance: distances[pick] };
  });
  for (const m of moves) {
    indices[m.index] = m.cell;
    distances[m.index] = 0;
  }
  return moves.length;
}

describe('repairEmptyCells', () => {
  it('re-seeds each empty cell with the worst vector of the cell with the largest error', async () => {
    // Worked by hand. Cell 0 holds vectors 0, 1 (errors 1, 9); cell 1 holds 2, 3 (4, 0).
    // Cell 2 takes vector 1 from cell 0 (error 10 > 4), leaving cell 0 with error 1; then
    // cell 3 takes vector 2 from cell 1 (4 > 1).
    const indices = new Uint32Array([0, 0, 1, 1]);
    const distances = new Float64Array([1, 9, 4, 0]);
    const usage = new Uint32Array([2, 2, 0, 0]);
    const cellDistortion = new Float64Array([10, 4, 0, 0]);
    expect(await repairArrays(indices, distances, usage, cellDistortion)).toBe(2);
    expect(Array.from(indices)).toEqual([0, 2, 3, 1]);
    expect(Array.from(distances)).toEqual([1, 0, 0, 0]);
    expect(Array.from(usage)).toEqual([1, 1, 1, 1]);
    expect(Array.from(cellDistortion)).toEqual([1, 0, 0, 0]);
  });

  it('re-seeds a donor that the repair itself emptied', async () => {
    // Cell 1 holds one vector with error 5 (its codeword is stale): giving it to empty
    // cell 2 empties cell 1, which then takes cell 0's worst vector.
    const indices = new Uint32Array([0, 0, 1]);
    const distances = new Float64Array([1, 2, 5]);
    const usage = new Uint32Array([2, 1, 0]);
    const cellDistortion = new Float64Array([3, 5, 0]);
    expect(await repairArrays(indices, distances, usage, cellDistortion)).toBe(2);
    expect(Array.from(indices)).toEqual([0, 1, 2]);
    expect(Array.from(usage)).toEqual([1, 1, 1]);
  });

  it('never leaves a cell empty while some cell has error', async () => {
    const indices = new Uint32Array([0, 0, 0, 0]);
    const distances = new Float64Array([1, 2, 3, 4]);
    const usage = new Uint32Array([4, 0, 0, 0]);
    const cellDistortion = new Float64Array([10, 0, 0, 0]);
    const repaired = await repairArrays(indices, distances, usage, cellDistortion);
    expect(repaired).toBe(3);
    expect(Array.from(usage)).toEqual([1, 1, 1, 1]);
    // Worst first: vector 3 → cell 1, vector 2 → cell 2, vector 1 → cell 3.
    expect(Array.from(indices)).toEqual([0, 3, 2, 1]);
  });

  it('fails clearly when no cell has error to give', async () => {
    await expect(
      repairArrays(new Uint32Array([0, 0]), new Float64Array([0, 0]), new Uint32Array([2, 0]), new Float64Array([0, 0])),
    ).rejects.toThrow(/empty cell/);
  });
});

describe('splitCodebook', () => {
  it('splits every codeword into c ± δσ when doubling (worked example)', () => {
    // One cell, d = 2, 4 vectors, total error 8: σ = sqrt(8 / (4 · 2)) = 1, δ = 0.5.
    const book = {
      size: 1, codewords: new Float32Array([2, 3]), usage: new Uint32Array([4]),
      cellDistortion: new Float64Array([8]), distortion: 1, iterations: 0, trace: [],
    };
    expect(Array.from(splitCodebook(book, 2, 2, 0.5))).toEqual([2.5, 3.5, 1.5, 2.5]);
  });

  it('splits the cells with the largest error when not doubling', () => {
    const book = {
      size: 3, codewords: new Float32Array([0, 10, 20]), usage: new Uint32Array([1, 1, 1]),
      cellDistortion: new Float64Array([1, 4, 4]), distortion: 3, iterations: 0, trace: [],
    };
    // d = 1: σ_1 = σ_2 = 2; cells 1 and 2 tie on error and both beat cell 0.
    expect(Array.from(splitCodebook(book, 1, 5, 0.25))).toEqual([0, 10.5, 20.5, 9.5, 19.5]);
  });
});
