import { afterAll, describe, expect, it } from 'vitest';
import { createRng, shutdownEngineWorkers } from '../../../server/engine/training/index';
import { checkResidual, decodeResidual, encodeResidual, trainResidual, type ResidualStructure } from '../../../server/engine/structures/index';

afterAll(() => shutdownEngineWorkers());

function gaussian(n: number, d: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * d);
  for (let i = 0; i < out.length; i++) out[i] = rng.normal();
  return out;
}

const mean = (a: Float64Array) => a.reduce((s, x) => s + x, 0) / a.length;

describe('residual codebook', () => {
  it('stores Σ 2^b_s codewords, stage 0 first, and decodes each block as the sum of its stage codewords', async () => {
    const d = 3;
    const x = gaussian(3000, d, 1);
    const r = await trainResidual(x, d, { bits: [3, 2, 1] });
    expect(r.tableCodewords).toBe(8 + 4 + 2);
    expect(r.codewords.length).toBe(14 * d);
    expect(r.rate).toBe(6);
    const codes = encodeResidual(r.codewords, r.structure, x, d);
    expect(codes.indices.map((a) => Math.max(...a))).toEqual([7, 3, 1]);
    const y = decodeResidual(r.codewords, r.structure, codes.indices, d);
    const v = 17;
    for (let i = 0; i < d; i++) {
      const s = r.codewords[codes.indices[0][v] * d + i] + r.codewords[(8 + codes.indices[1][v]) * d + i] + r.codewords[(12 + codes.indices[2][v]) * d + i];
      expect(y[v * d + i]).toBe(Math.fround(s));
    }
    // The reported distortion is the decoder's reconstruction error on the training vectors.
    let err = 0;
    for (let i = 0; i < x.length; i++) err += (x[i] - y[i]) ** 2;
    expect(err / x.length).toBeCloseTo(r.distortion, 12);
    expect(mean(codes.distances) / d).toBeCloseTo(r.distortion, 12);
  });

  it('lowers the distortion with every stage of the sequential design', async () => {
    const d = 4;
    const r = await trainResidual(gaussian(4000, d, 2), d, { bits: [3, 3, 3] });
    expect(r.stages).toHaveLength(3);
    for (let s = 1; s < 3; s++) expect(r.stages[s].distortion).toBeLessThan(r.stages[s - 1].distortion);
  });

  it('searches with M = 1 exactly as greedy search', async () => {
    const d = 4;
    const x = gaussian(3000, d, 3);
    const r = await trainResidual(x, d, { bits: [3, 3, 2] });
    const greedy = encodeResidual(r.codewords, r.structure, x, d);
    const one = encodeResidual(r.codewords, { ...r.structure, search: { kind: 'm-best', m: 1 } }, x, d);
    for (let s = 0; s < 3; s++) expect(Array.from(one.indices[s])).toEqual(Array.from(greedy.indices[s]));
  });

  it('never raises the distortion in a kept refinement step and reports the ones it drops', async () => {
    const d = 4;
    const x = gaussian(4000, d, 4);
    const plain = await trainResidual(x, d, { bits: [3, 3], seed: 5 });
    const refined = await trainResidual(x, d, { bits: [3, 3], seed: 5, refinementPasses: 3 });
    expect(refined.refinement).toHaveLength(6);
    let current = plain.distortion;
    for (const step of refined.refinement) {
      expect(step.before).toBe(current);
      expect(step.kept).toBe(step.after <= step.before);
      if (step.kept) current = step.after;
    }
    expect(refined.distortion).toBe(current);
    expect(refined.distortion).toBeLessThanOrEqual(plain.distortion);
  });

  it('is the same bits for the same seed', async () => {
    const d = 2;
    const x = gaussian(2000, d, 6);
    const a = await trainResidual(x, d, { bits: [2, 2], init: 'kmeans++', seed: 9, refinementPasses: 1, search: { kind: 'm-best', m: 3 } });
    const b = await trainResidual(x, d, { bits: [2, 2], init: 'kmeans++', seed: 9, refinementPasses: 1, search: { kind: 'm-best', m: 3 } });
    expect(Buffer.from(a.codewords.buffer).equals(Buffer.from(b.codewords.buffer))).toBe(true);
  });

  it('trains the same bits on one thread and on two', async () => {
    const d = 4;
    const x = gaussian(40000, d, 8);
    const one = await trainResidual(x, d, { bits: [3, 2], threads: 1, maxIterations: 5 });
    const two = await trainResidual(x, d, { bits: [3, 2], threads: 2, maxIterations: 5 });
    expect(Buffer.from(one.codewords.buffer).equals(Buffer.from(two.codewords.buffer))).toBe(true);
  });

  it('refuses bad structures, indices and options with ENGINE_INVALID_INPUT', async () => {
    const s: ResidualStructure = { kind: 'residual', bits: [2, 1], search: { kind: 'greedy' } };
    expect(() => checkResidual(new Float32Array(6), s, 1)).not.toThrow();
    expect(() => checkResidual(new Float32Array(5), s, 1)).toThrow(/needs 6 codeword values/);
    expect(() => checkResidual(new Float32Array(6), { ...s, search: { kind: 'm-best', m: 0 } }, 1)).toThrow(/search\.m/);
    expect(() => decodeResidual(new Float32Array(6), s, [new Uint32Array([4]), new Uint32Array([0])], 1)).toThrow(/not below 4/);
    expect(() => decodeResidual(new Float32Array(6), s, [new Uint32Array([0])], 1)).toThrow(/one index array per stage/);
    const x = gaussian(50, 2, 7);
    await expect(trainResidual(x, 2, { bits: [] })).rejects.toThrow(/bits must list/);
    await expect(trainResidual(x, 2, { bits: [0] })).rejects.toThrow(/bits\[0\]/);
    await expect(trainResidual(x, 2, { bits: [1, 1], refinementPasses: 99 })).rejects.toThrow(/refinementPasses/);
    await expect(trainResidual(x, 2, { bits: [1], init: 'nope' as never })).rejects.toThrow(/init must be one of/);
  });
});
