// Small hand-built codebooks of every structure (seeded codewords, invented), and seeded indices each allows, for
// tests that check sizes and costs by hand.
import { makeCodebook, type Codebook } from '../../server/engine';
import type { EncodedImage } from '../../server/engine/format/codec';
import type { CodebookStructure } from '../../server/engine/structures/types';
import { lcg } from './c-decoder';

const training = { source: 'invented', vectorCount: 1, init: 'random' as const, epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] };

export { lcg };

/** A balanced binary tree of the given depth, nodes in breadth-first order: node n's children are 2n + 1 and 2n + 2. */
export function balancedChildren(depth: number): Int32Array {
  const size = 2 ** (depth + 1) - 1;
  const children = new Int32Array(2 * size).fill(-1);
  for (let n = 0; n < 2 ** depth - 1; n += 1) [children[2 * n], children[2 * n + 1]] = [2 * n + 1, 2 * n + 2];
  return children;
}

/**
 * A comb of the given depth in breadth-first order: the root splits into nodes 1 and 2, node 2k − 1 into 2k + 1 and
 * 2k + 2, down to the depth; every even node is a leaf, and so is the last odd one (2·depth − 1): leaves at depths
 * 1, 2, …, depth and a second one at depth.
 */
export function combChildren(depth: number): Int32Array {
  const size = 2 * depth + 1;
  const children = new Int32Array(2 * size).fill(-1);
  for (let level = 0, n = 0; level < depth; level += 1) {
    [children[2 * n], children[2 * n + 1]] = [2 * level + 1, 2 * level + 2];
    n = 2 * level + 1;
  }
  return children;
}

export interface BookSpec {
  color: 'luma' | 'rgb';
  w: number;
  h: number;
  meanBits: number;
  size: number;
  structure: CodebookStructure;
}

/** A codebook of the spec with seeded codewords: plain tables in 0..255, mean-removed ones and residual stages signed. */
export function structureBook(c: BookSpec): Codebook {
  const channels = c.color === 'rgb' ? 3 : 1;
  const d = c.w * c.h * channels;
  const next = lcg(c.size * 977 + c.meanBits * 13 + d);
  const codewords = new Float32Array(c.size * d);
  const firstStage = c.structure.kind === 'residual' ? 2 ** c.structure.bits[0] * d : 0;
  for (let i = 0; i < codewords.length; i += 1) {
    const plain = c.meanBits === 0 && (c.structure.kind !== 'residual' || i < firstStage);
    codewords[i] = plain ? next() * 255 : (next() * 2 - 1) * 40;
  }
  const preprocessing = c.meanBits > 0 ? { kind: 'mean-removed' as const, meanBits: c.meanBits } : { kind: 'none' as const };
  return makeCodebook({ size: c.size, dimension: d, patch: { width: c.w, height: c.h, channels, color: c.color }, preprocessing, codewords, usage: new Uint32Array(c.size), training, structure: c.structure });
}

/** Seeded indices the structure allows for a width × height image: any codeword, a tree's leaf, or one per residual stage. */
export function encodedFor(book: Codebook, width: number, height: number, seed: number): EncodedImage {
  const patch = book.patch!;
  const blocksX = Math.ceil(width / patch.width);
  const blocksY = Math.ceil(height / patch.height);
  const blocks = blocksX * blocksY;
  const next = lcg(seed);
  const st = book.structure;
  let indices: Uint32Array;
  if (st.kind === 'residual') {
    indices = new Uint32Array(blocks * st.bits.length);
    for (let i = 0; i < indices.length; i += 1) {
      const s = i % st.bits.length;
      const offset = st.bits.slice(0, s).reduce((a, b) => a + 2 ** b, 0);
      indices[i] = offset + Math.floor(next() * 2 ** st.bits[s]);
    }
  } else {
    const allowed = Array.from({ length: book.size }, (_, n) => n).filter((n) => st.kind !== 'tree' || st.children[2 * n] === -1);
    indices = Uint32Array.from({ length: blocks }, () => allowed[Math.floor(next() * allowed.length)]);
  }
  const m = book.preprocessing.kind === 'mean-removed' ? book.preprocessing.meanBits : 0;
  const meanCodes = m > 0 ? Uint8Array.from({ length: blocks }, () => Math.floor(next() * 2 ** m)) : null;
  return { width, height, blocksX, blocksY, indices, meanCodes };
}
