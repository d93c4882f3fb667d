import { afterAll, describe, expect, it } from 'vitest';
import { createRng, evaluate, parseCodebookJson, serializeCodebook, shutdownEngineWorkers, trainCodebooks, trainResidualCodebook, trainTreeCodebook } from '../../../server/engine';

afterAll(() => shutdownEngineWorkers());

/** An invented first-order Gauss–Markov source (correlation 0.9 between neighbouring components, unit variance). */
function markov(n: number, d: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * d);
  const a = 0.9;
  for (let v = 0; v < n; v++) {
    let x = rng.normal();
    for (let i = 0; i < d; i++) {
      out[v * d + i] = x;
      x = a * x + Math.sqrt(1 - a * a) * rng.normal();
    }
  }
  return out;
}

const D = 4;
const common = { init: 'split' as const, patch: null, preprocessing: { kind: 'none' as const }, source: 'invented Gauss–Markov vectors', seed: 7, maxIterations: 30 };
const train = markov(6000, D, 1);
const held = markov(3000, D, 2);

describe('engine entry points for tree and residual codebooks', () => {
  it('trains a tree into a codebook that survives its own JSON and evaluates with both searches', async () => {
    const r = await trainTreeCodebook(train, D, { ...common, growth: { kind: 'balanced', depth: 5 } });
    expect(r.codebook.structure).toMatchObject({ kind: 'tree', balanced: true });
    expect(r.codebook.size).toBe(63);
    expect(r.fullSearchDistortion).toBeLessThanOrEqual(r.treeDistortion);
    const again = parseCodebookJson(serializeCodebook(r.codebook));
    expect(again.checksum).toBe(r.codebook.checksum);
    const e = await evaluate(again, { vectors: held, dimension: D });
    // The evaluation's MSE is the tree search's; a full search over the same leaves is never worse.
    expect(e.treeSearch!.treeMse).toBeCloseTo(e.mse, 12);
    expect(e.treeSearch!.fullSearchMse).toBeLessThanOrEqual(e.treeSearch!.treeMse);
    // Fixed rate: 5 path bits per 4-component vector (no patch: per component).
    expect(e.bppFixed).toBe(5 / 4);
  });

  it('residual VQ with two stages of b/2 bits loses to full search with b bits and beats one stage of b/2', async () => {
    // The trade-off the issue names (common practice for multistage VQ): 3 + 3 bits sits between 2^6 and 2^3 codewords.
    const [full6] = (await trainCodebooks(train, D, { ...common, bits: 6 })).slice(-1);
    const [full3] = (await trainCodebooks(train, D, { ...common, bits: 3 })).slice(-1);
    const rvq = await trainResidualCodebook(train, D, { ...common, stageBits: [3, 3] });
    expect(rvq.codebook.size).toBe(16);
    const mse = async (book: typeof full6) => (await evaluate(book, { vectors: held, dimension: D })).mse;
    const [m6, m3, mr] = [await mse(full6), await mse(full3), await mse(rvq.codebook)];
    expect(mr).toBeGreaterThan(m6);
    expect(mr).toBeLessThan(m3);
    expect((await evaluate(rvq.codebook, { vectors: held, dimension: D })).treeSearch).toBeNull();
  });
});
