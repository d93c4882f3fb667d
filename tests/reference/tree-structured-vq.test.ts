import { afterAll, describe, expect, it } from 'vitest';
import { kmeans } from 'ml-kmeans';
import { assignSync, createRng, exactDistance, shutdownEngineWorkers, train } from '../../server/engine/training/index';
import { encodeTree, trainTree, type TreeResult } from '../../server/engine/structures/index';
import { splitStart } from '../../server/engine/structures/tree';

afterAll(() => shutdownEngineWorkers());

/** Gauss–Markov rows (AR(1), coefficient a, unit variance): the usual stand-in for image blocks. */
function gaussMarkov(n: number, d: number, a: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * d);
  for (let v = 0; v < n; v++) {
    let p = rng.normal();
    out[v * d] = p;
    for (let i = 1; i < d; i++) {
      p = a * p + Math.sqrt(1 - a * a) * rng.normal();
      out[v * d + i] = p;
    }
  }
  return out;
}

const meanPerComponent = (distances: Float64Array, d: number) => distances.reduce((s, x) => s + x, 0) / (distances.length * d);
const rows = (a: Float32Array, d: number) => Array.from({ length: a.length / d }, (_, v) => Array.from(a.subarray(v * d, (v + 1) * d)));

describe('tree-structured VQ against outside references', () => {
  it('splits a node by the same 2-means as the Lloyd engine and ml-kmeans from the same start', async () => {
    const d = 3;
    const n = 3000;
    const rng = createRng(11);
    const x = new Float32Array(n * d);
    for (let v = 0; v < n; v++) for (let i = 0; i < d; i++) x[v * d + i] = (v % 2 ? 4 : -3) + (i === 0 ? 2 : 1) * rng.normal();
    const o = { epsilon: 0, maxIterations: 6, seed: 3 };
    const tree = await trainTree(x, d, { growth: { kind: 'balanced', depth: 1 }, ...o });

    // The root's start: the float64 mean rounded to float32, and its error, as trainTree forms them.
    const root = new Float32Array(d);
    const sums = new Float64Array(d);
    for (let v = 0; v < n; v++) for (let i = 0; i < d; i++) sums[i] += x[v * d + i];
    for (let i = 0; i < d; i++) root[i] = sums[i] / n;
    expect(Array.from(tree.codewords.subarray(0, d))).toEqual(Array.from(root));
    let error = 0;
    for (let v = 0; v < n; v++) error += exactDistance(x, v * d, root, 0, d);
    const start = splitStart(root, error, n, d, o.seed, 1, 0.01);

    // The engine's own Lloyd iteration (WebAssembly search, shard folds) from that start: the same bits.
    const lloyd = (await train(x, d, { k: 2, init: 'random', initialCodewords: start, epsilon: 0, maxIterations: 6 })).codebooks[0];
    expect(tree.iterations).toBe(lloyd.iterations);
    expect(Array.from(tree.codewords.subarray(d))).toEqual(Array.from(lloyd.codewords));

    // ml-kmeans (v7, npm): plain float64 Lloyd iterations, an independent implementation; float32 rounding apart,
    // the same centroids after the same number of updates.
    const ml = kmeans(rows(x, d), 2, { initialization: rows(start, d), maxIterations: lloyd.iterations, tolerance: -1 });
    for (let j = 0; j < 2; j++) {
      for (let i = 0; i < d; i++) {
        expect(Math.abs(tree.codewords[(1 + j) * d + i] - ml.centroids[j][i])).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(ml.centroids[j][i])));
      }
    }
  });

  it('distorts no better than full search but within 10 % of it on a Gauss–Markov source', async () => {
    // Gersho & Gray, "Vector Quantization and Signal Compression" (1992), ch. 12: tree search is suboptimal, and on
    // correlated Gaussian sources a balanced TSVQ stays close to full-search VQ of the same size (common practice).
    // Measured here (d = 8, a = 0.9, b = 6): 0.24 dB on the training set, 0.22 dB held out; on an i.i.d. source
    // (d = 4) the gap is about 1 dB, since no split direction is preferred there.
    const d = 8;
    const x = gaussMarkov(20000, d, 0.9, 1);
    const held = gaussMarkov(20000, d, 0.9, 2);
    const tree = await trainTree(x, d, { growth: { kind: 'balanced', depth: 6 } });
    const full = (await train(x, d, { k: 64, init: 'split' })).codebooks.at(-1)!;
    // Tree search never beats a full search over its own leaves (each vector's leaf is one of the candidates).
    expect(tree.treeDistortion).toBeGreaterThanOrEqual(tree.fullSearchDistortion);
    expect(tree.treeDistortion).toBeGreaterThanOrEqual(full.distortion);
    expect(tree.treeDistortion).toBeLessThan(1.1 * full.distortion);
    const treeHeld = meanPerComponent(encodeTree(tree.codewords, tree.structure, held, d).distances, d);
    const fullHeld = meanPerComponent(assignSync(held, d, full.codewords).distances, d);
    expect(treeHeld).toBeGreaterThanOrEqual(fullHeld);
    expect(treeHeld).toBeLessThan(1.1 * fullHeld);
  });

  it('prunes along the lower convex hull of every pruned subtree’s distortion and rate', async () => {
    // Chou, Lookabaugh & Gray, "Optimal pruning with applications to tree-structured source coding and modeling",
    // IEEE Trans. IT 35(2), 1989: with distortion and rate linear over the leaves, the generalized BFOS sequence
    // visits exactly the vertices of the lower convex hull of the (rate, distortion) pairs of all pruned subtrees,
    // with slopes that never fall. Checked by enumerating the 677 pruned subtrees of a depth-4 tree.
    const d = 2;
    const n = 2000;
    const x = gaussMarkov(n, d, 0.5, 3);
    const grown = await trainTree(x, d, { growth: { kind: 'balanced', depth: 4 } });
    const pruned = await trainTree(x, d, { growth: { kind: 'balanced', depth: 4 }, prune: { rate: 0 } });
    const steps = pruned.pruning!;
    expect(pruned.leaves).toBe(1);
    expect(steps[0]).toMatchObject({ leaves: 16, rate: 4, distortion: grown.treeDistortion });

    const { count, error } = nodeStatistics(grown, x, d);
    const children = grown.structure.children;
    const depthOf = (t: number): number => (t === 0 ? 0 : 1 + depthOf(Math.floor((t - 1) / 2)));
    // Every pruned subtree rooted at t as (total path bits, total error).
    const options = (t: number): [number, number][] => {
      const own: [number, number] = [count[t] * depthOf(t), error[t]];
      if (children[2 * t] < 0) return [own];
      const out: [number, number][] = [own];
      for (const [rl, dl] of options(children[2 * t])) for (const [rr, dr] of options(children[2 * t + 1])) out.push([rl + rr, dl + dr]);
      return out;
    };
    const all = options(0).map(([r, e]) => ({ rate: r / n, distortion: e / (n * d) }));
    expect(all).toHaveLength(677);

    for (let i = 0; i < steps.length; i++) {
      if (i > 1) expect(steps[i].lambda!).toBeGreaterThanOrEqual(steps[i - 1].lambda! * (1 - 1e-9));
      if (i > 0) expect(steps[i].rate).toBeLessThanOrEqual(steps[i - 1].rate);
      // A hull vertex minimises D + λR for every λ between its two slopes; take their midpoint.
      const lo = i === 0 ? 0 : steps[i].lambda!;
      const hi = i + 1 < steps.length ? steps[i + 1].lambda! : 2 * lo + 1;
      const lambda = (lo + hi) / 2;
      const best = Math.min(...all.map((p) => p.distortion + lambda * p.rate));
      expect(steps[i].distortion + lambda * steps[i].rate).toBeLessThanOrEqual(best + 1e-12);
    }
  });

  it('grows greedily and prunes to a rate with less distortion than the balanced tree of that depth', async () => {
    // Riskin & Gray, "A greedy tree growing algorithm for the design of variable rate vector quantizers", IEEE Trans.
    // SP 39(11), 1991: an unbalanced tree grown by the largest distortion drop per bit and pruned back beats the
    // balanced tree at the same mean rate. Measured here (Gauss–Markov a = 0.9, d = 4, rate 6): 0.0540 against 0.0551.
    const d = 4;
    const x = gaussMarkov(20000, d, 0.9, 1);
    const balanced = await trainTree(x, d, { growth: { kind: 'balanced', depth: 6 } });
    const greedy = await trainTree(x, d, { growth: { kind: 'greedy', rate: 7 }, prune: { rate: 6 } });
    expect(greedy.rate).toBeLessThanOrEqual(6);
    expect(greedy.structure.balanced).toBe(false);
    expect(greedy.treeDistortion).toBeLessThan(balanced.treeDistortion);
  });
});

/** Training vectors and total squared error at every node of a tree, by descending each vector from the root. */
function nodeStatistics(tree: TreeResult, x: Float32Array, d: number): { count: Float64Array; error: Float64Array } {
  const m = tree.structure.children.length / 2;
  const count = new Float64Array(m);
  const error = new Float64Array(m);
  const { children } = tree.structure;
  for (let v = 0; v < x.length / d; v++) {
    let t = 0;
    for (;;) {
      count[t]++;
      error[t] += exactDistance(x, v * d, tree.codewords, t * d, d);
      if (children[2 * t] < 0) break;
      const l = children[2 * t];
      const r = children[2 * t + 1];
      t = exactDistance(x, v * d, tree.codewords, r * d, d) < exactDistance(x, v * d, tree.codewords, l * d, d) ? r : l;
    }
  }
  return { count, error };
}
