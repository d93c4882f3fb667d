import { afterAll, describe, expect, it } from 'vitest';
import { kmeans } from 'ml-kmeans';
import { assign, assignSync, createRng, shutdownEngineWorkers } from '../../server/engine/training/index';

// Exactness of the nearest search: the fast float32 expansion ‖x‖² − 2x·c + ‖c‖² must
// never decide a near-tie. The reference is a float64 brute-force search written here
// (definition: distance Σ (x_i − c_i)² summed in component order; first minimum wins),
// and ml-kmeans' nearest(), an independent float64 search with the same tie rule.

afterAll(() => shutdownEngineWorkers());

function brute(vectors: Float32Array, d: number, codewords: Float32Array) {
  const n = vectors.length / d;
  const k = codewords.length / d;
  const indices = new Uint32Array(n);
  const distances = new Float64Array(n);
  const ties = new Uint8Array(n);
  for (let v = 0; v < n; v++) {
    let best = Infinity;
    let bj = 0;
    for (let j = 0; j < k; j++) {
      let s = 0;
      for (let i = 0; i < d; i++) s += (vectors[v * d + i] - codewords[j * d + i]) ** 2;
      if (s < best) {
        best = s;
        bj = j;
        ties[v] = 0;
      } else if (s === best) {
        ties[v] = 1;
      }
    }
    indices[v] = bj;
    distances[v] = best;
  }
  return { indices, distances, ties };
}

/** Every integer point of [lo, hi]^d, as float32 rows. */
function grid(d: number, lo: number, hi: number): Float32Array {
  const side = hi - lo + 1;
  const n = side ** d;
  const out = new Float32Array(n * d);
  for (let v = 0; v < n; v++) {
    let r = v;
    for (let i = 0; i < d; i++) {
      out[v * d + i] = lo + (r % side);
      r = Math.floor(r / side);
    }
  }
  return out;
}

describe('exact nearest search', () => {
  it('sends every exact tie on an integer grid to the lowest index', async () => {
    // Codewords on the even sub-lattice (listed twice, so duplicates tie as well): each odd
    // coordinate of a grid point is equidistant from two codeword coordinates.
    // Sized so that the two-thread call really runs on the worker threads.
    const d = 5;
    const points = grid(d, -3, 3);
    const lattice = grid(d, -1, 1).map((v) => v * 2);
    const codewords = new Float32Array(lattice.length * 2);
    codewords.set(lattice.slice().reverse());
    codewords.set(lattice, lattice.length);
    const ref = brute(points, d, codewords);
    // Every point ties (duplicates), so the lowest index of the first copy must win.
    expect(ref.ties.reduce((s, t) => s + t, 0)).toBe(points.length / d);
    expect(Math.max(...ref.indices)).toBeLessThan(lattice.length / d);
    for (const result of [assignSync(points, d, codewords), await assign(points, d, codewords, { threads: 2 })]) {
      expect(Array.from(result.indices)).toEqual(Array.from(ref.indices));
      expect(Array.from(result.distances)).toEqual(Array.from(ref.distances));
    }
  });

  it('agrees with float64 brute force on near-ties far from the origin', async () => {
    // Large common offset and tiny separations: float32 rounding of ‖x‖² and x·c is far
    // coarser than the gaps, so only the exact re-decision can get these right.
    const rng = createRng(11);
    const d = 16;
    const k = 40;
    const n = 12000;
    const base = Array.from({ length: d }, () => 1000 + rng.next() * 10);
    const codewords = new Float32Array(k * d);
    for (let j = 0; j < k; j++) for (let i = 0; i < d; i++) codewords[j * d + i] = base[i] + rng.normal() * 1e-3;
    const vectors = new Float32Array(n * d);
    for (let v = 0; v < n; v++) {
      const a = rng.nextInt(k);
      const b = rng.nextInt(k);
      // Midpoints of codeword pairs plus a hair: distances differ in the last few bits.
      for (let i = 0; i < d; i++) {
        vectors[v * d + i] = (codewords[a * d + i] + codewords[b * d + i]) / 2 + rng.normal() * 1e-5;
      }
    }
    const ref = brute(vectors, d, codewords);
    const sync = assignSync(vectors, d, codewords);
    const par = await assign(vectors, d, codewords, { threads: 2 });
    expect(Array.from(sync.indices)).toEqual(Array.from(ref.indices));
    expect(Array.from(sync.distances)).toEqual(Array.from(ref.distances));
    expect(Array.from(par.indices)).toEqual(Array.from(ref.indices));
    expect(Array.from(par.distances)).toEqual(Array.from(ref.distances));
  });

  it('matches ml-kmeans nearest() on random data of awkward shapes', async () => {
    const rng = createRng(5);
    for (const [n, d, k] of [[3000, 1, 3], [2500, 5, 9], [2000, 13, 37], [1500, 64, 130]]) {
      const vectors = new Float32Array(n * d).map(() => Math.round(rng.next() * 8));
      const codewords = new Float32Array(k * d).map(() => Math.round(rng.next() * 8 * 2) / 2);
      const data = Array.from({ length: n }, (_, v) => Array.from(vectors.subarray(v * d, (v + 1) * d)));
      const centers = Array.from({ length: k }, (_, j) => Array.from(codewords.subarray(j * d, (j + 1) * d)));
      // One ml-kmeans step from `centers` reports the partition of the data by `centers`.
      const ml = kmeans(data, k, { initialization: centers, maxIterations: 1, tolerance: -1 });
      const ours = await assign(vectors, d, codewords);
      expect(Array.from(ours.indices)).toEqual(ml.clusters);
    }
  });
});
