import { describe, expect, it } from 'vitest';
import { makeCodebook, type Codebook } from '../../../server/engine/format/codebook-schema';
import { encodeImage, reconstruct } from '../../../server/engine/format/codec';
import type { PixelImage } from '../../../server/engine/io/image';
import { removeMeans } from '../../../server/engine/io/mean-removal';
import { stepRangeOf, structureSteps } from '../../../server/engine/metrics/structure-steps';
import { ancestorsAtLevel, partitionRows, residualStageTables, treeLevels } from '../../../server/engine/structures/levels';
import { encodeResidual, trainResidual } from '../../../server/engine/structures/residual';
import { trainTree } from '../../../server/engine/structures/tree';
import type { ResidualStructure, TreeStructure } from '../../../server/engine/structures/types';

// Every reference below is written out here by hand, independently of the engine's search and decoder: tiling in
// raster order of 4×4 blocks, descent to the nearer child in float64 (left on ties), stage sums in float64, the
// decoder's rounding (clamp to 0..255, round half up), MSE in float64 over every pixel and
// PSNR = 10·log10(255²/MSE) (the definition, common practice).

const W = 32;
const H = 24;
const P = 4;
const D = P * P;

/** A luma test card: gradients, a disc and seeded noise, integer levels 0..255. */
function testCard(seed: number): PixelImage {
  const pixels = new Float32Array(W * H);
  let s = seed >>> 0;
  for (let y = 0; y < H; y++) {
    for (let x = 0; x < W; x++) {
      s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
      const disc = (x - 20) ** 2 + (y - 11) ** 2 < 49 ? 90 : 0;
      const v = 30 + 5 * x + 2 * y + disc + ((s >>> 24) % 17);
      pixels[y * W + x] = Math.min(255, v);
    }
  }
  return { name: `card-${seed}`, width: W, height: H, color: 'luma', channels: 1, pixels };
}

/** Blocks in raster order, components row-major inside the block (W and H are multiples of P: no padding). */
function blocksOf(image: PixelImage): Float64Array[] {
  const out: Float64Array[] = [];
  for (let by = 0; by < H / P; by++) {
    for (let bx = 0; bx < W / P; bx++) {
      const v = new Float64Array(D);
      for (let r = 0; r < P; r++) for (let c = 0; c < P; c++) v[r * P + c] = image.pixels[(by * P + r) * W + bx * P + c];
      out.push(v);
    }
  }
  return out;
}

const vectorsOf = (image: PixelImage) => Float32Array.from(blocksOf(image).flatMap((b) => Array.from(b)));

function distance(x: Float64Array, table: Float32Array, row: number): number {
  let e = 0;
  for (let i = 0; i < D; i++) {
    const t = x[i] - table[row * D + i];
    e += t * t;
  }
  return e;
}

/** MSE (float64) of blocks rebuilt from float64 sums, rounded as the decoder rounds, against the source blocks. */
function mseOf(source: Float64Array[], rebuilt: Float64Array[]): number {
  let sum = 0;
  source.forEach((x, b) => {
    for (let i = 0; i < D; i++) {
      const v = rebuilt[b][i];
      const q = v <= 0 ? 0 : v >= 255 ? 255 : Math.floor(v + 0.5);
      sum += (x[i] - q) ** 2;
    }
  });
  return sum / (source.length * D);
}

const psnrOf = (mse: number) => (mse === 0 ? Infinity : 10 * Math.log10((255 * 255) / mse));

function book(codewords: Float32Array, usage: Uint32Array, structure: TreeStructure | ResidualStructure): Codebook {
  return makeCodebook({
    size: codewords.length / D,
    dimension: D,
    patch: { width: P, height: P, channels: 1, color: 'luma' },
    preprocessing: { kind: 'none' },
    codewords,
    usage,
    training: { source: 'test card', vectorCount: (W / P) * (H / P), init: 'split', epsilon: 0.001, seed: 1, iterations: 1, distortion: 1, trace: [] },
    structure,
  });
}

/**
 * Descent by hand: from the root, the nearer of the two children, at most `level` times and never past a leaf.
 * @returns the node reached and the branches taken
 */
function descend(x: Float64Array, codewords: Float32Array, children: Int32Array, level: number): { node: number; length: number } {
  let node = 0;
  let length = 0;
  while (length < level && children[2 * node] >= 0) {
    const left = children[2 * node];
    const right = children[2 * node + 1];
    node = distance(x, codewords, right) < distance(x, codewords, left) ? right : left;
    length++;
  }
  return { node, length };
}

async function treeBook(growth: { kind: 'balanced'; depth: number } | { kind: 'greedy'; leaves: number }) {
  const training = testCard(7);
  const tree = await trainTree(vectorsOf(training), D, { growth, seed: 5 });
  return book(tree.codewords, tree.usage, tree.structure);
}

describe('tree levels', () => {
  it('lists each level of a hand-made unbalanced tree with depths, parents and ancestors', () => {
    // Root 0 → 1, 2; node 2 → 3, 4; node 3 → 5, 6. Levels: [0], [1, 2], [3, 4], [5, 6].
    const children = Int32Array.from([1, 2, -1, -1, 3, 4, 5, 6, -1, -1, -1, -1, -1, -1]);
    const tree = treeLevels({ kind: 'tree', balanced: false, children });
    expect(tree.levels).toEqual([[0], [1, 2], [3, 4], [5, 6]]);
    expect(Array.from(tree.parent)).toEqual([-1, 0, 0, 2, 2, 3, 3]);
    expect(Array.from(tree.depth)).toEqual([0, 1, 1, 2, 2, 3, 3]);
    expect(Array.from(ancestorsAtLevel(tree, 0))).toEqual([0, 0, 0, 0, 0, 0, 0]);
    // Node 1 is a leaf at level 1, so it stands for itself at every level below.
    expect(Array.from(ancestorsAtLevel(tree, 1))).toEqual([0, 1, 2, 2, 2, 2, 2]);
    expect(Array.from(ancestorsAtLevel(tree, 2))).toEqual([0, 1, 2, 3, 4, 3, 3]);
    expect(Array.from(ancestorsAtLevel(tree, 3))).toEqual([0, 1, 2, 3, 4, 5, 6]);
  });

  it('names the rows whose cells split the vectors once: a tree’s leaves, a residual codebook’s first stage', () => {
    // The same hand-made tree: nodes 1, 4, 5 and 6 have no children.
    const children = Int32Array.from([1, 2, -1, -1, 3, 4, 5, 6, -1, -1, -1, -1, -1, -1]);
    expect(partitionRows({ kind: 'tree', balanced: false, children })).toEqual([1, 4, 5, 6]);
    // Stages of 2 and 3 bits: the first stage is rows 0..3 of the 4 + 8 row table.
    expect(partitionRows({ kind: 'residual', bits: [2, 3], search: { kind: 'greedy' } })).toEqual([0, 1, 2, 3]);
    expect(partitionRows({ kind: 'full' })).toBeNull();
  });

  it('splits a balanced tree of depth 3 into levels of 1, 2, 4 and 8 nodes, leaves only at the last', async () => {
    const codebook = await treeBook({ kind: 'balanced', depth: 3 });
    const s = codebook.structure as TreeStructure;
    const tree = treeLevels(s);
    expect(tree.levels.map((l) => l.length)).toEqual([1, 2, 4, 8]);
    tree.levels.forEach((nodes, level) => nodes.forEach((n) => expect(s.children[2 * n] < 0).toBe(level === 3)));
    // Every vector reaches the root, and a balanced tree passes all of them on to each level.
    expect(tree.levels.map((nodes) => nodes.reduce((a, n) => a + codebook.usage[n], 0))).toEqual([48, 48, 48, 48]);
  });

  for (const growth of [{ kind: 'balanced', depth: 3 } as const, { kind: 'greedy', leaves: 7 } as const]) {
    it(`reconstructs a ${growth.kind} tree at every level as a hand-written descent stopped there`, async () => {
      const codebook = await treeBook(growth);
      const s = codebook.structure as TreeStructure;
      const image = testCard(11);
      const source = blocksOf(image);
      const result = await structureSteps(codebook, image);
      const levels = treeLevels(s).levels.length;
      expect(result.kind).toBe('tree-level');
      expect(result.steps.map((x) => x.step)).toEqual([...Array(levels).keys()]);
      for (const step of result.steps) {
        const reached = source.map((x) => descend(x, codebook.codewords, s.children, step.step));
        const rebuilt = reached.map(({ node }) => Float64Array.from(codebook.codewords.subarray(node * D, node * D + D)));
        const mse = mseOf(source, rebuilt);
        expect(step.mse).toBeCloseTo(mse, 9);
        expect(step.psnr).toBeCloseTo(psnrOf(mse), 9);
        // Index bits: the path length, cut at the level (a leaf above it ends the path sooner).
        expect(step.indexBits).toBeCloseTo(reached.reduce((a, r) => a + r.length, 0) / source.length, 12);
      }
      // Descending further never loses on the training card's statistics here: the deepest level is the best.
      expect(result.steps[0].mse).toBeGreaterThan(result.steps[result.steps.length - 1].mse);
    });
  }

  it('gives the full reconstruction, pixel for pixel, at the deepest level', async () => {
    const codebook = await treeBook({ kind: 'greedy', leaves: 6 });
    const image = testCard(12);
    const range = stepRangeOf(codebook.structure)!;
    const { pixels, steps } = await structureSteps(codebook, image, { keep: range.last });
    const full = reconstruct(codebook, await encodeImage(codebook, image));
    expect(Buffer.from(pixels!).equals(Buffer.from(full))).toBe(true);
    let sum = 0;
    for (let i = 0; i < full.length; i++) sum += (image.pixels[i] - full[i]) ** 2;
    expect(steps[steps.length - 1].mse).toBeCloseTo(sum / full.length, 9);
  });

  it('draws every block as the root at level 0', async () => {
    const codebook = await treeBook({ kind: 'balanced', depth: 2 });
    const { pixels } = await structureSteps(codebook, testCard(13), { keep: 0 });
    const root = Array.from(codebook.codewords.subarray(0, D), (v) => Math.floor(v + 0.5));
    // Block (0, 0) and block (7, 5), the last one: both the root's codeword.
    for (const [bx, by] of [[0, 0], [7, 5]]) {
      for (let r = 0; r < P; r++) for (let c = 0; c < P; c++) expect(pixels![(by * P + r) * W + bx * P + c]).toBe(root[r * P + c]);
    }
  });
});

describe('residual stages', () => {
  for (const search of [{ kind: 'greedy' } as const, { kind: 'm-best', m: 3 } as const]) {
    it(`measures stages 1, 1+2, 1+2+3 (${search.kind} search) as float64 prefix sums of the codebook's own coding`, async () => {
      const trained = await trainResidual(vectorsOf(testCard(21)), D, { bits: [2, 2, 1], search, seed: 3 });
      const codebook = book(trained.codewords, new Uint32Array(trained.codewords.length / D), trained.structure);
      const image = testCard(22);
      const source = blocksOf(image);
      // Greedy: each stage's nearest codeword to what the stages before left, by hand. M-best: the indices of the
      // codebook's own search (a prefix of an M-best path is not a greedy path), summed here by hand.
      let indices: number[][];
      if (search.kind === 'greedy') {
        indices = source.map((x) => {
          const left = Float64Array.from(x);
          let first = 0;
          return trained.structure.bits.map((bits) => {
            let best = first;
            for (let j = first + 1; j < first + 2 ** bits; j++) if (distance(left, codebook.codewords, j) < distance(left, codebook.codewords, best)) best = j;
            for (let i = 0; i < D; i++) left[i] -= codebook.codewords[best * D + i];
            first += 2 ** bits;
            return best;
          });
        });
      } else {
        const codes = encodeResidual(codebook.codewords, trained.structure, vectorsOf(image), D);
        const offsets = [0, 4, 8];
        indices = source.map((_, b) => codes.indices.map((stage, s) => offsets[s] + stage[b]));
      }
      const result = await structureSteps(codebook, image);
      expect(result.kind).toBe('residual-stages');
      expect(result.steps.map((x) => [x.step, x.indexBits])).toEqual([[1, 2], [2, 4], [3, 5]]);
      for (const step of result.steps) {
        const rebuilt = indices.map((path) => {
          const sum = new Float64Array(D);
          for (const j of path.slice(0, step.step)) for (let i = 0; i < D; i++) sum[i] += codebook.codewords[j * D + i];
          return sum;
        });
        const mse = mseOf(source, rebuilt);
        expect(step.mse).toBeCloseTo(mse, 9);
        expect(step.psnr).toBeCloseTo(psnrOf(mse), 9);
      }
      const full = reconstruct(codebook, await encodeImage(codebook, image));
      const last = await structureSteps(codebook, image, { keep: 3 });
      expect(Buffer.from(last.pixels!).equals(Buffer.from(full))).toBe(true);
    });
  }

  it('adds the block mean back at every stage of a mean-removed codebook', async () => {
    const meanBits = 5;
    // Training vectors with each block's quantised mean removed, as the codec removes them.
    const training = vectorsOf(testCard(25));
    removeMeans(training, D, meanBits);
    const trained = await trainResidual(training, D, { bits: [2, 1], seed: 4 });
    const codebook = makeCodebook({ ...book(trained.codewords, new Uint32Array(trained.codewords.length / D), trained.structure), preprocessing: { kind: 'mean-removed', meanBits } });
    const image = testCard(26);
    const source = blocksOf(image);
    // The coding (stage indices and mean codes) is the codec's; the sums, the mean level and the rounding are by hand.
    const encoded = await encodeImage(codebook, image);
    const result = await structureSteps(codebook, image);
    for (const step of result.steps) {
      const rebuilt = source.map((_, b) => {
        // Mean level of code c with m bits: the centre of its interval, (c + ½)·255 / 2^m.
        const sum = new Float64Array(D).fill(((encoded.meanCodes![b] + 0.5) * 255) / 2 ** meanBits);
        for (let u = 0; u < step.step; u++) {
          const j = encoded.indices[b * 2 + u];
          for (let i = 0; i < D; i++) sum[i] += codebook.codewords[j * D + i];
        }
        return sum;
      });
      expect(step.mse).toBeCloseTo(mseOf(source, rebuilt), 9);
    }
  });

  it('places each stage in the table and measures how far it swings from zero', () => {
    // Stage 0: 2 codewords of d = 2; stage 1: 4 codewords.
    const codewords = Float32Array.from([100, 120, 140, 160, -3, 1, 2, -7.5, 0, 0, 4, 5]);
    const tables = residualStageTables(codewords, { kind: 'residual', bits: [1, 2], search: { kind: 'greedy' } }, 2);
    expect(tables).toEqual([
      { stage: 0, bits: 1, first: 0, count: 2, maxAbs: 160 },
      { stage: 1, bits: 2, first: 2, count: 4, maxAbs: 7.5 },
    ]);
  });

  it('refuses a step the codebook does not have, and a flat codebook', async () => {
    const trained = await trainResidual(vectorsOf(testCard(23)), D, { bits: [1, 1], seed: 3 });
    const codebook = book(trained.codewords, new Uint32Array(trained.codewords.length / D), trained.structure);
    await expect(structureSteps(codebook, testCard(24), { keep: 3 })).rejects.toThrow(/step 3 is not one of this codebook's steps \(1\.\.2\)/);
    const flat = makeCodebook({ ...codebook, size: 2, codewords: codebook.codewords.slice(0, 2 * D), usage: new Uint32Array(2), structure: { kind: 'full' } });
    expect(stepRangeOf(flat.structure)).toBeNull();
    await expect(structureSteps(flat, testCard(24))).rejects.toThrow(/one flat table/);
  });
});
