import { afterAll, describe, expect, it } from 'vitest';
import { createRng, shutdownEngineWorkers } from '../../../server/engine/training/index';
import { encodeResidual, encodeTree, trainTree, type TreeStructure } from '../../../server/engine/structures/index';
import { descendTree, treeSearchPlan } from '../../../server/engine/structures/tree-search';
import { searchResidualStages } from '../../../server/engine/structures/residual-search';

afterAll(() => shutdownEngineWorkers());

// ---- the plain searches, written out here as the reference the fast ones must match exactly ----

/** Plain descent: at each internal node both children's float64 squared distances, right only when strictly nearer. */
function plainDescent(codewords: Float32Array, children: Int32Array, vectors: Float32Array, d: number) {
  const n = vectors.length / d;
  const leaves = new Uint32Array(n);
  const paths = new Uint32Array(n);
  const distances = new Float64Array(n);
  const dist = (o: number, t: number) => {
    let s = 0;
    for (let i = 0; i < d; i++) {
      const a = vectors[o + i] - codewords[t * d + i];
      s += a * a;
    }
    return s;
  };
  for (let v = 0; v < n; v++) {
    let t = 0;
    let path = 0;
    while (children[2 * t] >= 0) {
      const right = dist(v * d, children[2 * t + 1]) < dist(v * d, children[2 * t]);
      t = children[2 * t + (right ? 1 : 0)];
      path = path * 2 + (right ? 1 : 0);
    }
    leaves[v] = t;
    paths[v] = path;
    distances[v] = dist(v * d, t);
  }
  return { leaves, paths, distances };
}

/** Plain keep-M stage search: every (candidate, codeword) scored Σ((x − p) − w)² in float64, ties to the earlier arrival. */
function plainStages(codewords: Float32Array, bits: number[], d: number, vectors: Float32Array, m: number): Uint32Array[] {
  const n = vectors.length / d;
  const sizes = bits.map((b) => 2 ** b);
  const offsets = sizes.map((_, s) => sizes.slice(0, s).reduce((a, b) => a + b, 0));
  const out = bits.map(() => new Uint32Array(n));
  for (let v = 0; v < n; v++) {
    let cands: { p: Float64Array; path: number[] }[] = [{ p: new Float64Array(d), path: [] }];
    for (let s = 0; s < bits.length; s++) {
      const scored: { e: number; c: number; j: number }[] = [];
      cands.forEach((cand, c) => {
        for (let j = 0; j < sizes[s]; j++) {
          let e = 0;
          for (let i = 0; i < d; i++) {
            const t = vectors[v * d + i] - cand.p[i] - codewords[(offsets[s] + j) * d + i];
            e += t * t;
          }
          scored.push({ e, c, j });
        }
      });
      // A stable sort keeps arrival order among equal scores.
      scored.sort((a, b) => a.e - b.e);
      cands = scored.slice(0, m).map(({ c, j }) => {
        const p = new Float64Array(d);
        for (let i = 0; i < d; i++) p[i] = cands[c].p[i] + codewords[(offsets[s] + j) * d + i];
        return { p, path: [...cands[c].path, j] };
      });
    }
    cands[0].path.forEach((j, s) => (out[s][v] = j));
  }
  return out;
}

// ---- data ----

function uniform(n: number, scale: number, seed: number, offset = 0): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n);
  for (let i = 0; i < n; i++) out[i] = offset + scale * rng.next();
  return out;
}

/**
 * A random tree of `internal` splits: each split turns a random leaf into a parent, so paths have uneven lengths;
 * renumbered breadth-first as the structure requires.
 */
function randomTree(internal: number, d: number, seed: number): { codewords: Float32Array; structure: TreeStructure } {
  const rng = createRng(seed);
  const kids: [number, number][] = [[-1, -1]];
  const leaves = [0];
  for (let s = 0; s < internal; s++) {
    const at = Math.floor(rng.next() * leaves.length);
    const t = leaves[at];
    kids.push([-1, -1], [-1, -1]);
    kids[t] = [kids.length - 2, kids.length - 1];
    leaves.splice(at, 1, kids.length - 2, kids.length - 1);
  }
  const order = [0];
  for (let i = 0; i < order.length; i++) if (kids[order[i]][0] >= 0) order.push(...kids[order[i]]);
  const id = new Map(order.map((t, i) => [t, i]));
  const children = new Int32Array(order.length * 2).fill(-1);
  order.forEach((t, i) => {
    if (kids[t][0] >= 0) {
      children[2 * i] = id.get(kids[t][0])!;
      children[2 * i + 1] = id.get(kids[t][1])!;
    }
  });
  const codewords = uniform(order.length * d, 255, seed + 1);
  const depths = new Int32Array(order.length);
  for (let t = 0; t < order.length; t++) if (children[2 * t] >= 0) depths[children[2 * t]] = depths[children[2 * t + 1]] = depths[t] + 1;
  const leafDepths = new Set([...depths].filter((_, t) => children[2 * t] < 0));
  return { codewords, structure: { kind: 'tree', children, balanced: leafDepths.size === 1 } };
}

/**
 * Makes the root's right child the left child with components 0 and `j` swapped, and returns vectors whose components
 * 0 and j are equal: each is then exactly as far from both children, but the float64 sums of the two distances add
 * their terms in a different order, so they round apart and the plain comparison goes either way by rounding alone.
 */
function rootTies(codewords: Float32Array, children: Int32Array, d: number, n: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const l = children[0];
  const r = children[1];
  const j = d - 1;
  codewords.copyWithin(r * d, l * d, l * d + d);
  [codewords[r * d], codewords[r * d + j]] = [codewords[l * d + j], codewords[l * d]];
  const out = uniform(n * d, 255, seed + 1);
  for (let v = 0; v < n; v++) out[v * d + j] = out[v * d];
  // Half of them with the swapped components close to the codeword's, where the distances are smallest.
  for (let v = 0; v < n; v++) if (rng.next() < 0.5) out[v * d] = out[v * d + j] = codewords[l * d] + (rng.next() - 0.5) * 1e-3;
  return out;
}

function expectSameDescent(codewords: Float32Array, structure: TreeStructure, vectors: Float32Array, d: number) {
  const plain = plainDescent(codewords, structure.children, vectors, d);
  const fast = encodeTree(codewords, structure, vectors, d);
  expect(fast.leaves).toEqual(plain.leaves);
  expect(fast.paths).toEqual(plain.paths);
  expect(fast.distances).toEqual(plain.distances);
}

describe('fast tree descent', () => {
  it('reaches the same leaves, paths and distances as the plain descent on random data, balanced and unbalanced', () => {
    for (const [d, internal, seed] of [[16, 255, 1], [64, 255, 2], [3, 40, 3], [7, 90, 4], [1, 20, 5]] as const) {
      const tree = randomTree(internal, d, seed);
      expectSameDescent(tree.codewords, tree.structure, uniform(2000 * d, 255, seed + 10), d);
    }
    const unbalanced = randomTree(60, 16, 6);
    expect(unbalanced.structure.balanced).toBe(false);
  });

  it('matches the plain descent on a trained greedy tree and on a tree that is only a root', async () => {
    const d = 16;
    const x = uniform(4000 * d, 255, 21);
    const tree = await trainTree(x, d, { growth: { kind: 'greedy', leaves: 50 }, maxIterations: 5 });
    expect(tree.structure.balanced).toBe(false);
    expectSameDescent(tree.codewords, tree.structure, uniform(3000 * d, 255, 22), d);
    expectSameDescent(uniform(d, 255, 23), { kind: 'tree', children: Int32Array.of(-1, -1), balanced: true }, x, d);
  });

  it('decides near-ties as the plain descent does, where the hyperplane sign alone would not', () => {
    let redecided = 0;
    let signOnlyDisagrees = 0;
    for (const [d, seed] of [[16, 31], [64, 32], [5, 33]] as const) {
      const tree = randomTree(30, d, seed);
      const x = rootTies(tree.codewords, tree.structure.children, d, 4000, seed + 1);
      expectSameDescent(tree.codewords, tree.structure, x, d);
      const plain = plainDescent(tree.codewords, tree.structure.children, x, d);
      const plan = treeSearchPlan(tree.codewords, tree.structure, d);
      redecided += descendTree(plan, tree.codewords, x).redecided;
      // The same test with no margin: the data is close enough to the ties that rounding flips some decisions.
      const signOnly = descendTree({ ...plan, slack: 0 }, tree.codewords, x);
      for (let v = 0; v < plain.leaves.length; v++) if (signOnly.leaves[v] !== plain.leaves[v]) signOnlyDisagrees++;
    }
    expect(redecided).toBeGreaterThan(0);
    expect(signOnlyDisagrees).toBeGreaterThan(0);
  });

  it('sends exact ties left, as the plain descent does', () => {
    // Children at 0 and 2 on the first axis; every vector with first component 1 is equally far from both.
    const d = 4;
    const codewords = Float32Array.of(1, 0, 0, 0, 0, 0, 0, 0, 2, 0, 0, 0);
    const structure: TreeStructure = { kind: 'tree', children: Int32Array.of(1, 2, -1, -1, -1, -1), balanced: true };
    const x = Float32Array.of(1, 5, -3, 7, 1, 0, 0, 0, 1.5, 0, 0, 0);
    const codes = encodeTree(codewords, structure, x, d);
    expect([...codes.leaves]).toEqual([1, 1, 2]);
    expectSameDescent(codewords, structure, x, d);
  });
});

describe('fast residual stage search', () => {
  const cases: [number, number[], number][] = [[16, [4, 4], 1], [16, [4, 4], 8], [64, [4, 4], 1], [8, [3, 2, 3], 4], [8, [3, 2, 3], 1], [5, [6], 3], [16, [2, 2, 2, 2], 64]];

  it('gives the plain search\'s indices on random data, greedy and M-best', () => {
    for (const [i, [d, bits, m]] of cases.entries()) {
      const total = bits.reduce((a, b) => a + 2 ** b, 0);
      const codewords = new Float32Array(total * d);
      // Stage 0 at pixel scale, later stages smaller, as trained residual stages are.
      let at = 0;
      bits.forEach((b, s) => {
        codewords.set(uniform(2 ** b * d, 255 / (s + 1) ** 2, 40 + 7 * i + s, s === 0 ? 0 : -127 / (s + 1) ** 2), at * d);
        at += 2 ** b;
      });
      const x = uniform(1500 * d, 255, 60 + i);
      const expected = plainStages(codewords, bits, d, x, m);
      const fast = searchResidualStages(codewords, bits, d, x, m);
      expect(fast.indices).toEqual(expected);
      const viaEncoder = encodeResidual(codewords, { kind: 'residual', bits, search: m === 1 ? { kind: 'greedy' } : { kind: 'm-best', m } }, x, d);
      expect(viaEncoder.indices).toEqual(expected);
    }
  });

  it('breaks exact ties as the plain search does (earlier candidate, then lower index)', () => {
    // Small integer codewords and vectors: every score is exact, and many are equal.
    for (const [i, [d, bits, m]] of cases.entries()) {
      const rng = createRng(80 + i);
      const total = bits.reduce((a, b) => a + 2 ** b, 0);
      const codewords = new Float32Array(total * d);
      for (let j = 0; j < codewords.length; j++) codewords[j] = Math.floor(rng.next() * 3) - 1;
      const x = new Float32Array(800 * d);
      for (let j = 0; j < x.length; j++) x[j] = Math.floor(rng.next() * 5) - 2;
      const fast = searchResidualStages(codewords, bits, d, x, m);
      expect(fast.indices).toEqual(plainStages(codewords, bits, d, x, m));
      // Ties put more than one candidate in the band at some stage: the plain rule, not the fast score, chose.
      expect(fast.rescored).toBeGreaterThan(800 * bits.length);
    }
  });

  it('decides rounding-level ties by the plain scores, greedy and M-best', () => {
    // Every stage's codewords come in pairs that are each other with components 0 and d − 1 swapped, and every vector
    // (so every residual, stage 0's codewords being symmetric in those two) has equal components there: each pair is
    // an exact tie whose two float64 scores sum their terms in a different order and round apart.
    for (const [i, [d, bits, m]] of cases.entries()) {
      if (d < 2 || bits.length < 2) continue;
      const rng = createRng(90 + i);
      const total = bits.reduce((a, b) => a + 2 ** b, 0);
      const codewords = new Float32Array(total * d);
      let at = 0;
      bits.forEach((b, s) => {
        for (let j = 0; j < 2 ** b; j += 2) {
          const w = uniform(d, 255 / (s + 1) ** 2, 1000 * i + 10 * s + j, s === 0 ? 0 : -127 / (s + 1) ** 2);
          if (s === 0) w[d - 1] = w[0];
          codewords.set(w, (at + j) * d);
          [w[0], w[d - 1]] = [w[d - 1], w[0]];
          codewords.set(w, (at + j + 1) * d);
        }
        at += 2 ** b;
      });
      const x = uniform(1500 * d, 255, 70 + i);
      for (let v = 0; v < 1500; v++) x[v * d + d - 1] = x[v * d] = codewords[Math.floor(rng.next() * 2 ** bits[0]) * d] + (rng.next() - 0.5) * 1e-3;
      const fast = searchResidualStages(codewords, bits, d, x, m);
      expect(fast.indices).toEqual(plainStages(codewords, bits, d, x, m));
    }
  });
});
