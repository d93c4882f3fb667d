import { afterAll, describe, expect, it } from 'vitest';
import { createRng, EngineError, shutdownEngineWorkers } from '../../../server/engine/training/index';
import { checkTree, decodeTree, encodeTree, leafCodewords, trainTree, treeDistortions, type TreeStructure } from '../../../server/engine/structures/index';

afterAll(() => shutdownEngineWorkers());

function gaussian(n: number, d: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * d);
  for (let i = 0; i < out.length; i++) out[i] = rng.normal();
  return out;
}

const sum = (a: Float64Array) => a.reduce((s, x) => s + x, 0);

describe('tree-structured codebook', () => {
  it('grows a balanced tree whose b-bit path is the leaf rank from left to right', async () => {
    const d = 3;
    const x = gaussian(3000, d, 1);
    const tree = await trainTree(x, d, { growth: { kind: 'balanced', depth: 4 } });
    expect(tree.structure.balanced).toBe(true);
    expect(tree.leaves).toBe(16);
    expect(tree.codewords.length).toBe(31 * d);
    expect(tree.rate).toBe(4);
    const codes = encodeTree(tree.codewords, tree.structure, x, d);
    for (let v = 0; v < 3000; v++) {
      expect(codes.lengths[v]).toBe(4);
      // Breadth-first order puts the 16 leaves last, left to right: node 15 + rank.
      expect(codes.leaves[v]).toBe(15 + codes.paths[v]);
    }
    // The reported tree distortion is that of the descent the encoder makes.
    expect(sum(codes.distances) / (3000 * d)).toBeCloseTo(tree.treeDistortion, 12);
    // Usage: the root sees every vector, each node's children split its vectors.
    expect(tree.usage[0]).toBe(3000);
    for (let t = 0; t < 15; t++) expect(tree.usage[2 * t + 1] + tree.usage[2 * t + 2]).toBe(tree.usage[t]);
  });

  it('decodes every path back to its leaf codeword', async () => {
    const d = 2;
    const x = gaussian(1500, d, 2);
    const tree = await trainTree(x, d, { growth: { kind: 'greedy', leaves: 11 } });
    const codes = encodeTree(tree.codewords, tree.structure, x, d);
    const y = decodeTree(tree.codewords, tree.structure, codes, d);
    for (let v = 0; v < 1500; v++) {
      const t = codes.leaves[v];
      expect(Array.from(y.subarray(v * d, v * d + d))).toEqual(Array.from(tree.codewords.subarray(t * d, t * d + d)));
    }
  });

  it('is the same bits for the same seed and differs for another', async () => {
    const d = 4;
    const x = gaussian(2000, d, 3);
    const a = await trainTree(x, d, { growth: { kind: 'balanced', depth: 3 }, seed: 7 });
    const b = await trainTree(x, d, { growth: { kind: 'balanced', depth: 3 }, seed: 7 });
    const c = await trainTree(x, d, { growth: { kind: 'balanced', depth: 3 }, seed: 8 });
    expect(Buffer.from(a.codewords.buffer).equals(Buffer.from(b.codewords.buffer))).toBe(true);
    expect(Buffer.from(a.codewords.buffer).equals(Buffer.from(c.codewords.buffer))).toBe(false);
  });

  it('grows greedily to the leaves asked for, an unbalanced complete prefix code (Kraft sum 1)', async () => {
    const d = 2;
    // Two clusters of unequal spread: the greedy split spends its leaves on the wide one.
    const rng = createRng(4);
    const x = new Float32Array(4000 * d);
    for (let v = 0; v < 4000; v++) for (let i = 0; i < d; i++) x[v * d + i] = v % 2 === 0 ? 10 + rng.normal() * 3 : rng.normal() * 0.1;
    const tree = await trainTree(x, d, { growth: { kind: 'greedy', leaves: 20 } });
    expect(tree.leaves).toBe(20);
    expect(tree.structure.balanced).toBe(false);
    const codes = encodeTree(tree.codewords, tree.structure, x, d);
    const depthOf = new Map<number, number>();
    codes.leaves.forEach((t, v) => depthOf.set(t, codes.lengths[v]));
    // Kraft (1949), Cover & Thomas, "Elements of Information Theory", Thm 5.2.1: a complete binary prefix code has
    // Σ 2^−ℓ = 1. Every leaf here is used, so the lengths seen are all of them.
    expect(depthOf.size).toBe(20);
    expect([...depthOf.values()].reduce((s, l) => s + 2 ** -l, 0)).toBe(1);
    // Each split lowers the distortion.
    for (let i = 1; i < tree.growth.length; i++) expect(tree.growth[i].distortion).toBeLessThan(tree.growth[i - 1].distortion);
    expect(tree.rate).toBeCloseTo(sum(Float64Array.from(codes.lengths)) / 4000, 12);
  });

  it('grows greedily until the mean path length reaches the rate asked for', async () => {
    const d = 2;
    const x = gaussian(3000, d, 9);
    const tree = await trainTree(x, d, { growth: { kind: 'greedy', rate: 3.5 } });
    expect(tree.rate).toBeGreaterThanOrEqual(3.5);
    // The split before the last left it below the rate.
    expect(tree.growth[tree.growth.length - 2].rate).toBeLessThan(3.5);
    expect(tree.growth.at(-1)!.rate).toBe(tree.rate);
  });

  it('never reports a full search over its leaves worse than its tree search', async () => {
    const d = 4;
    const x = gaussian(4000, d, 5);
    const tree = await trainTree(x, d, { growth: { kind: 'balanced', depth: 5 } });
    expect(tree.fullSearchDistortion).toBeLessThanOrEqual(tree.treeDistortion);
    expect(leafCodewords(tree.codewords, tree.structure, d).length).toBe(32 * d);
    const training = treeDistortions(tree.codewords, tree.structure, x, d);
    expect(training.tree).toBeCloseTo(tree.treeDistortion, 12);
    expect(training.fullSearch).toBeCloseTo(tree.fullSearchDistortion, 12);
    const held = treeDistortions(tree.codewords, tree.structure, gaussian(4000, d, 55), d);
    expect(held.fullSearch).toBeLessThanOrEqual(held.tree);
    expect(held.fullSearch).toBeLessThan(held.tree); // 32 leaves in 4-D: some held-out block is nearer a leaf off its path
  });

  it('keeps a balanced index when a node has too few distinct vectors to split', async () => {
    const d = 2;
    const x = new Float32Array([0, 0, 0, 0, 0, 0, 5, 5]);
    const tree = await trainTree(x, d, { growth: { kind: 'balanced', depth: 3 } });
    expect(tree.structure.balanced).toBe(true);
    expect(tree.leaves).toBe(8);
    expect(tree.treeDistortion).toBe(0);
    const codes = encodeTree(tree.codewords, tree.structure, x, d);
    expect(Array.from(codes.lengths)).toEqual([3, 3, 3, 3]);
  });

  it('refuses malformed trees and paths with ENGINE_INVALID_INPUT', () => {
    const cw = new Float32Array(3);
    const bad: TreeStructure = { kind: 'tree', balanced: true, children: new Int32Array([2, 1, -1, -1, -1, -1]) };
    expect(() => checkTree(cw, bad, 1)).not.toThrow();
    const cycle: TreeStructure = { kind: 'tree', balanced: true, children: new Int32Array([1, 1, -1, -1, -1, -1]) };
    expect(() => checkTree(cw, cycle, 1)).toThrow(EngineError);
    const back: TreeStructure = { kind: 'tree', balanced: true, children: new Int32Array([1, 2, 0, 0, -1, -1]) };
    expect(() => checkTree(cw, back, 1)).toThrow(/bad child/);
    const good: TreeStructure = { kind: 'tree', balanced: true, children: new Int32Array([1, 2, -1, -1, -1, -1]) };
    expect(() => checkTree(new Float32Array(4), good, 1)).toThrow(/needs 3 codeword values/);
    expect(() => decodeTree(cw, good, { paths: new Uint32Array([0]), lengths: new Uint8Array([2]) }, 1)).toThrow(/runs past a leaf/);
    expect(() => decodeTree(cw, good, { paths: new Uint32Array([0]), lengths: new Uint8Array([0]) }, 1)).toThrow(/internal node/);
  });

  it('refuses bad options before any work', async () => {
    const x = gaussian(10, 2, 6);
    await expect(trainTree(x, 2, { growth: { kind: 'balanced', depth: 15 } })).rejects.toThrow(/depth must be an integer in 0\.\.14/);
    await expect(trainTree(x, 2, { growth: { kind: 'greedy', leaves: 0 } })).rejects.toThrow(/leaves/);
    await expect(trainTree(x, 2, { growth: { kind: 'greedy' } })).rejects.toThrow(/needs leaves, rate or both/);
    await expect(trainTree(x, 2, { growth: { kind: 'other' } as never })).rejects.toThrow(/growth/);
    await expect(trainTree(x, 2, { growth: { kind: 'balanced', depth: 2 }, prune: { rate: -1 } })).rejects.toThrow(/prune\.rate/);
  });

  it('stops with an AbortError when its signal is aborted', async () => {
    const controller = new AbortController();
    const x = gaussian(2000, 2, 7);
    const run = trainTree(x, 2, { growth: { kind: 'balanced', depth: 6 }, signal: controller.signal, onProgress: () => controller.abort() });
    await expect(run).rejects.toMatchObject({ name: 'AbortError' });
  });
});
