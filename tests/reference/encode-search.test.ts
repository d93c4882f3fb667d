import { afterAll, describe, expect, it } from 'vitest';
import { createRng, imagesToTrainingVectors, INIT, shutdownEngineWorkers, trainCodebooks, type PixelImage } from '../../server/engine';
import { EncodeKernel, type BlockShape } from '../../server/engine/wasm/encode-kernel';
import { encodeNearest } from '../../server/engine/parallel/encode-search';
import { tile } from '../../server/engine/io/patches';

// Exactness of the encoding search (exact rejection in the block's DCT basis, wasm/encode-kernel.ts): every index
// and distance must be what a float64 brute-force search gives. The reference is written here from the engine's
// definition of an exact distance (server/engine/core/exact-distance.ts: Σ (x_i − c_i)² over i in component order,
// each difference and the sum in float64; the first minimum wins, so ties go to the lowest index).

afterAll(() => shutdownEngineWorkers());

function brute(vectors: Float32Array, d: number, codewords: Float32Array) {
  const n = vectors.length / d;
  const k = codewords.length / d;
  const indices = new Uint32Array(n);
  const distances = new Float64Array(n);
  for (let v = 0; v < n; v++) {
    let best = Infinity;
    let bj = 0;
    for (let j = 0; j < k; j++) {
      let s = 0;
      for (let i = 0; i < d; i++) s += (vectors[v * d + i] - codewords[j * d + i]) ** 2;
      if (s < best) {
        best = s;
        bj = j;
      }
    }
    indices[v] = bj;
    distances[v] = best;
  }
  return { indices, distances };
}

const dim = (s: BlockShape) => s.width * s.height * s.channels;

function kernelSearch(vectors: Float32Array, shape: BlockShape, codewords: Float32Array) {
  const d = dim(shape);
  const n = vectors.length / d;
  const kernel = new EncodeKernel();
  kernel.setCodebook(codewords, codewords.length / d, shape);
  const indices = new Uint32Array(n);
  const distances = new Float64Array(n);
  kernel.encodeRange(vectors, 0, n, indices, distances);
  return { indices, distances };
}

/** Same indices, and distances equal bit for bit (Object.is: no −0/+0 or NaN slack). */
function expectSame(got: { indices: Uint32Array; distances: Float64Array }, want: { indices: Uint32Array; distances: Float64Array }) {
  expect(Array.from(got.indices)).toEqual(Array.from(want.indices));
  const differing = Array.from(got.distances).flatMap((x, i) => (Object.is(x, want.distances[i]) ? [] : [i]));
  expect(differing).toEqual([]);
}

function uniform(count: number, lo: number, hi: number, seed: number): Float32Array {
  const rng = createRng(seed);
  return Float32Array.from({ length: count }, () => lo + (hi - lo) * rng.next());
}

const SHAPES: [string, BlockShape][] = [
  ['8×8 luma', { width: 8, height: 8, channels: 1 }],
  ['2×2 luma (fewer components than the leading filter reads)', { width: 2, height: 2, channels: 1 }],
  ['3×5 luma (rows not a multiple of four)', { width: 3, height: 5, channels: 1 }],
  ['4×4 rgb', { width: 4, height: 4, channels: 3 }],
  ['5×3 rgb', { width: 5, height: 3, channels: 3 }],
];

describe.each(SHAPES)('encoding search, %s', (_name, shape) => {
  const d = dim(shape);

  it('matches float64 brute force on random data, K not a multiple of four', () => {
    const codewords = uniform(61 * d, 0, 255, 1);
    const vectors = uniform(700 * d, 0, 255, 2);
    expectSame(kernelSearch(vectors, shape, codewords), brute(vectors, d, codewords));
  });

  it('breaks exact ties to the lowest index and decides near-ties by the exact distance', () => {
    const rng = createRng(5);
    const base = uniform(20 * d, 40, 200, 3);
    // Each base codeword, an exact copy later in the table, and a copy one float32 step away in one component.
    const codewords = new Float32Array(60 * d);
    for (let j = 0; j < 20; j++) {
      const row = base.subarray(j * d, (j + 1) * d);
      codewords.set(row, j * d);
      codewords.set(row, (20 + j) * d);
      codewords.set(row, (40 + j) * d);
      const i = (40 + j) * d + (j % d);
      codewords[i] = codewords[i] + Math.max(Math.abs(codewords[i]) * 2 ** -23, 2 ** -20);
    }
    // Vectors: the codewords themselves, midpoints of pairs (equidistant in exact arithmetic) and tiny perturbations.
    const vectors = new Float32Array(300 * d);
    for (let v = 0; v < 300; v++) {
      const a = rng.nextInt(60);
      const b = rng.nextInt(60);
      for (let i = 0; i < d; i++) {
        const mid = (codewords[a * d + i] + codewords[b * d + i]) / 2;
        vectors[v * d + i] = v % 3 === 0 ? codewords[a * d + i] : v % 3 === 1 ? mid : mid + (rng.next() - 0.5) * 1e-3;
      }
    }
    const want = brute(vectors, d, codewords);
    expectSame(kernelSearch(vectors, shape, codewords), want);
    // The exact copies are never chosen: their twin has the same distance and a lower index.
    expect(Array.from(want.indices).some((j) => j >= 20 && j < 40)).toBe(false);
  });

  it('matches float64 brute force on residual-like data centred on zero and far from the origin', () => {
    for (const [lo, hi, seed] of [[-60, 60, 7], [1e6, 1e6 + 4, 8]] as const) {
      const codewords = uniform(37 * d, lo, hi, seed);
      const vectors = uniform(400 * d, lo, hi, seed + 100);
      expectSame(kernelSearch(vectors, shape, codewords), brute(vectors, d, codewords));
    }
  });
});

/** A photograph-like test card: gradients, hard edges, fine texture and sensor-like noise, unrounded like luma. */
function testCard(width: number, height: number, seed: number): PixelImage {
  const rng = createRng(seed);
  const pixels = new Float32Array(width * height);
  for (let y = 0; y < height; y += 1) {
    for (let x = 0; x < width; x += 1) {
      const ramp = (x / width) * 120 + 40;
      const edge = (x + 2 * y) % 53 < 20 ? 60 : 0;
      const texture = 25 * Math.sin(x * 0.9) * Math.cos(y * 0.7) + 15 * Math.sin((x * y) / 37);
      pixels[y * width + x] = Math.min(255, Math.max(0, ramp + edge + texture + (rng.next() - 0.5) * 6));
    }
  }
  return { name: `card-${seed}`, width, height, color: 'luma', channels: 1, pixels };
}

describe('encoding search on image blocks', () => {
  const shape = { width: 8, height: 8, channels: 1 };
  const patch = { width: 8, height: 8, channels: 1 as const, color: 'luma' as const };
  const images = [testCard(160, 120, 1), testCard(97, 131, 2)];
  const blocks = images.map((im) => tile(im, patch).vectors);
  const all = new Float32Array(blocks.reduce((s, b) => s + b.length, 0));
  blocks.reduce((o, b) => (all.set(b, o), o + b.length), 0);

  it('matches float64 brute force with a trained codebook (LBG splitting, K = 64)', async () => {
    const { vectors, dimension } = imagesToTrainingVectors(images, { patch, stride: 4 });
    const books = await trainCodebooks(vectors, dimension, { bits: 6, init: INIT.split, maxIterations: 8, seed: 1, patch, preprocessing: { kind: 'none' }, source: 'test' });
    const codewords = books[books.length - 1].codewords;
    expectSame(kernelSearch(all, shape, codewords), brute(all, 64, codewords));
  });

  it('matches float64 brute force with codewords drawn from the blocks themselves (exact matches and near misses)', () => {
    const n = all.length / 64;
    const k = Math.floor(n / 3);
    const codewords = new Float32Array(k * 64);
    for (let j = 0; j < k; j++) codewords.set(all.subarray(j * 3 * 64, (j * 3 + 1) * 64), j * 64);
    expectSame(kernelSearch(all, shape, codewords), brute(all, 64, codewords));
  });

  it('sends vectors that could overflow float32 to the exhaustive search, still exact', () => {
    const codewords = uniform(9 * 64, 0, 255, 11);
    const vectors = uniform(20 * 64, 0, 255, 12);
    vectors[3 * 64 + 5] = 1e20;
    vectors[7 * 64] = -3e19;
    expectSame(kernelSearch(vectors, shape, codewords), brute(vectors, 64, codewords));
  });
});

describe('encoding search on threads', () => {
  const shape = { width: 8, height: 8, channels: 1 };
  // Enough work that the search hands chunks to workers (more than one chunk of 4096 vectors).
  const codewords = uniform(256 * 64, 0, 255, 21);
  const vectors = uniform(9000 * 64, 0, 255, 22);

  it.each([
    ['workers only', { threads: 2 }],
    ['the caller and a worker', { threads: 2, callerThread: true }],
    ['the caller alone', { threads: 1, callerThread: true }],
  ])('gives the single-thread results with %s', async (_name, options) => {
    const want = kernelSearch(vectors, shape, codewords);
    expectSame(await encodeNearest(vectors, shape, codewords, 256, options), want);
  });

  it('searches the new codewords after a codebook is changed in place', async () => {
    const small = uniform(40 * 64, 0, 255, 31);
    const book = uniform(16 * 64, 0, 255, 32);
    expectSame(await encodeNearest(small, shape, book, 16), brute(small, 64, book));
    book.set(uniform(16 * 64, 0, 255, 33));
    expectSame(await encodeNearest(small, shape, book, 16), brute(small, 64, book));
  });

  it('agrees with float64 brute force on a sample of those vectors', () => {
    const sample = vectors.subarray(0, 500 * 64);
    expectSame(kernelSearch(sample, shape, codewords), brute(sample, 64, codewords));
  });
});
