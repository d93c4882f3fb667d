// Index assignment by binary switching (Zeger & Gersho 1990): a permutation that never raises the expected channel
// distortion, checked with a distortion computed here from its definition.
import { afterAll, describe, expect, it } from 'vitest';
import { encode, indexBits, makeCodebook, reconstruct, reorderCodebook, shutdownEngineWorkers, type Codebook } from '../../../server/engine';
import { Switching } from '../../../server/engine/channel/index-assignment';
import { madeUpCodebook, madeUpImage, training } from './fixtures';

afterAll(async () => {
  await shutdownEngineWorkers();
});

/**
 * Σ_i p_i Σ_j P(j|i) ‖y_i − y_c(j)‖² / d from the definition: P(j|i) = p^h (1−p)^(b−h) with h the Hamming distance,
 * c(j) = j for j < K and j − 2^(b−1) otherwise (the decoder's concealment), p_i the usage (uniform when all zero).
 */
function channelDistortionByDefinition(book: Codebook, p: number): number {
  const K = book.size;
  const b = indexBits(K);
  const d = book.dimension;
  const sum = book.usage.reduce((a, u) => a + u, 0);
  let total = 0;
  for (let i = 0; i < K; i += 1) {
    const pi = sum === 0 ? 1 / K : book.usage[i] / sum;
    for (let j = 0; j < 2 ** b; j += 1) {
      let h = 0;
      for (let x = i ^ j; x; x >>= 1) h += x & 1;
      const c = j < K ? j : j - 2 ** (b - 1);
      let dist = 0;
      for (let k = 0; k < d; k += 1) dist += (book.codewords[i * d + k] - book.codewords[c * d + k]) ** 2;
      total += pi * p ** h * (1 - p) ** (b - h) * dist;
    }
  }
  return total / d;
}

/** A 1-D scalar codebook: level value v_n at index n (patchless, dimension 1), uniform usage. */
function scalarBook(levels: number[]): Codebook {
  return makeCodebook({ size: levels.length, dimension: 1, patch: null, preprocessing: { kind: 'none' }, codewords: Float32Array.from(levels), usage: new Uint32Array(levels.length).fill(1), training });
}

function permutations(n: number): number[][] {
  if (n === 1) return [[0]];
  return permutations(n - 1).flatMap((p) => Array.from({ length: n }, (_, k) => [...p.slice(0, k), n - 1, ...p.slice(k)]));
}

describe('reorderCodebook', () => {
  it('returns a permutation of the codewords with their usage and a new checksum, leaving the input alone', () => {
    const book = madeUpCodebook({ size: 37, w: 2, h: 2, usage: 'random' });
    const original = Float32Array.from(book.codewords);
    const result = reorderCodebook(book, { ber: 0.01 });
    expect([...result.order].sort((a, b) => a - b)).toEqual(Array.from({ length: 37 }, (_, i) => i));
    result.order.forEach((old, n) => {
      expect(result.codebook.codewords.subarray(n * 4, n * 4 + 4)).toEqual(book.codewords.subarray(old * 4, old * 4 + 4));
      expect(result.codebook.usage[n]).toBe(book.usage[old]);
    });
    expect(book.codewords).toEqual(original);
    expect(result.swaps).toBeGreaterThan(0);
    expect(result.codebook.checksum).not.toBe(book.checksum);
  });

  it('never raises the expected channel distortion, computed from its definition, and lowers it on made-up codebooks', () => {
    for (const [size, ber, usage] of [[16, 0.01, 'zero'], [37, 0.001, 'random'], [64, 0.05, 'random'], [5, 0.2, 'zero']] as const) {
      const book = madeUpCodebook({ size, w: 2, h: 2, usage, seed: size });
      const result = reorderCodebook(book, { ber });
      const before = channelDistortionByDefinition(book, ber);
      const after = channelDistortionByDefinition(result.codebook, ber);
      expect(result.before).toBeCloseTo(before, 8);
      expect(result.after).toBeCloseTo(after, 8);
      expect(after).toBeLessThan(before);
    }
  });

  it('keeps every noiseless reconstruction, with indices renamed by the permutation', async () => {
    const book = madeUpCodebook({ size: 32, w: 2, h: 2 });
    const image = madeUpImage('luma', 22, 14, 6);
    const { codebook: reordered, order } = reorderCodebook(book, { ber: 0.01 });
    const a = await encode(book, image);
    const b = await encode(reordered, image);
    expect(b.reconstruction).toEqual(a.reconstruction);
    expect(reconstruct(reordered, b.encoded)).toEqual(a.reconstruction);
    b.encoded.indices.forEach((n, k) => expect(order[n]).toBe(a.encoded.indices[k]));
  });

  it('improves a Gray-coded 8-level scalar quantizer to the natural binary code\'s optimum', () => {
    const p = 0.01;
    // Level n sent as index g(n) = n xor (n >> 1): the binary reflected Gray code.
    const gray = new Array<number>(8);
    for (let n = 0; n < 8; n += 1) gray[n ^ (n >> 1)] = n;
    const natural = scalarBook([0, 1, 2, 3, 4, 5, 6, 7]);
    // For a uniform source on a uniform quantizer the natural binary code is optimal among all assignments on a BSC, with
    // D = p (4^b − 1) / 3 in squared steps (Crimmins, Horwitz, Palermo & Palermo 1969): 21p for b = 3. Checked here by
    // enumerating all 8! assignments.
    const best = Math.min(...permutations(8).map((perm) => channelDistortionByDefinition(scalarBook(perm), p)));
    expect(channelDistortionByDefinition(natural, p)).toBeCloseTo(best, 12);
    expect(channelDistortionByDefinition(natural, p)).toBeCloseTo(21 * p * (1 - p) ** 0 - 0, 2);
    const start = scalarBook(gray);
    const result = reorderCodebook(start, { ber: p });
    expect(result.after).toBeLessThan(channelDistortionByDefinition(start, p));
    expect(result.after).toBeGreaterThanOrEqual(best - 1e-12);
    expect(result.after).toBeCloseTo(best, 10);
  });

  it('refuses a codebook beyond its size limit and a rate outside (0, 0.5]', () => {
    const book = madeUpCodebook({ size: 8, w: 2, h: 2 });
    expect(() => reorderCodebook(book, { ber: 0.6 })).toThrow(/ber/);
    const big = makeCodebook({ size: 2048, dimension: 1, patch: null, preprocessing: { kind: 'none' }, codewords: new Float32Array(2048).map((_, i) => i), usage: new Uint32Array(2048), training });
    expect(() => reorderCodebook(big)).toThrow(/up to 10 index bits/);
  });
});

describe('the switching gain', () => {
  it('equals the change of the expected channel distortion that the swap makes, for every pair', () => {
    for (const [size, usage] of [[16, 'random'], [13, 'random'], [7, 'zero']] as const) {
      const book = madeUpCodebook({ size, w: 2, h: 2, usage, seed: size + 1 });
      const p = 0.07;
      const state = new Switching(book, p);
      // Walk a fixed sequence of swaps, checking every pair's predicted change against the distortion recomputed from its definition.
      for (const [u0, v0] of [[0, 1], [3, size - 1], [2, 5]]) {
        const current = permuted(book, state.at);
        const base = channelDistortionByDefinition(current, p) * book.dimension;
        for (let u = 0; u < size; u += 1) {
          for (let v = u + 1; v < size; v += 1) {
            const order = Uint32Array.from(state.at);
            [order[u], order[v]] = [order[v], order[u]];
            const after = channelDistortionByDefinition(permuted(book, order), p) * book.dimension;
            expect(state.gainOf(u, v)).toBeCloseTo(after - base, 9);
          }
        }
        state.swap(u0, v0);
      }
    }
  });
});

/** The codebook with codeword order[n] of `book` at index n (usage alike). */
function permuted(book: Codebook, order: Uint32Array): Codebook {
  const d = book.dimension;
  const codewords = new Float32Array(book.size * d);
  order.forEach((old, n) => codewords.set(book.codewords.subarray(old * d, (old + 1) * d), n * d));
  return makeCodebook({ ...book, codewords, usage: Uint32Array.from(order, (old) => book.usage[old]) });
}
