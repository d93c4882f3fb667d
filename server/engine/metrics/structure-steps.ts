// Partial reconstructions of a structured codebook: a tree's descent stopped at each level, a residual codebook's
// first stages summed. The image is coded once with the codebook's own search; every step is what a decoder builds
// from a prefix of that coding (a tree path cut after L branches, the first s stage indices), decoded by the one
// decoder (format/codec.ts `reconstruct`) so the last step is the full reconstruction, bit for bit.
import { EngineInputError } from '../input-error';
import type { Codebook } from '../format/codebook-schema';
import { encodeImage, reconstruct, type EncodedImage, type EncodeOptions } from '../format/codec';
import { stageOffsets } from '../format/structure-check';
import type { PixelImage } from '../io/image';
import { ancestorsAtLevel, treeLevels } from '../structures/levels';
import { meanSquaredError, psnrFromMse } from './distortion';

export type StepKind = 'tree-level' | 'residual-stages';

export interface StructureStep {
  /** Tree: the level descended to (0 = the root alone … the longest path). Residual: stages summed (1 … S). */
  step: number;
  /** Mean index bits a block spends to reach this step: a tree's path length cut at the level, Σ of the stages' bits. */
  indexBits: number;
  /** Against the source as the codebook sees it, per component on the 0..255 scale (as the full reconstruction's). */
  mse: number;
  /** 10·log10(255²/MSE) dB; +Infinity when exact. */
  psnr: number;
}

export interface StructureSteps {
  kind: StepKind;
  steps: StructureStep[];
}

/**
 * The steps a structure has (a tree: levels 0..longest path; residual: stages 1..S); null for the flat structures
 * (full, entropy-constrained), which have none.
 */
export function stepRangeOf(structure: Codebook['structure']): { kind: StepKind; first: number; last: number } | null {
  if (structure.kind === 'tree') return { kind: 'tree-level', first: 0, last: treeLevels(structure).levels.length - 1 };
  if (structure.kind === 'residual') return { kind: 'residual-stages', first: 1, last: structure.bits.length };
  return null;
}

interface Prefix {
  /** A codebook the decoder takes the prefix with, and the prefix's coded image. */
  codebook: Codebook;
  encoded: EncodedImage;
  indexBits: number;
}

/** Every step's decodable prefix of one coded image, in step order. */
function prefixes(codebook: Codebook, encoded: EncodedImage): Prefix[] {
  const s = codebook.structure;
  const blocks = encoded.blocksX * encoded.blocksY;
  if (s.kind === 'tree') {
    const tree = treeLevels(s);
    // Any node may stand for a block once descent stops early, so the cut coding is decoded as a plain table lookup.
    const flat: Codebook = { ...codebook, structure: { kind: 'full' } };
    return tree.levels.map((_, level) => {
      const ancestor = ancestorsAtLevel(tree, level);
      const indices = new Uint32Array(blocks);
      let bits = 0;
      for (let b = 0; b < blocks; b++) {
        indices[b] = ancestor[encoded.indices[b]];
        bits += Math.min(tree.depth[encoded.indices[b]], level);
      }
      return { codebook: flat, encoded: { ...encoded, indices }, indexBits: blocks === 0 ? 0 : bits / blocks };
    });
  }
  if (s.kind === 'residual') {
    const per = s.bits.length;
    const { offsets, total } = stageOffsets(s.bits);
    const d = codebook.dimension;
    return s.bits.map((_, t) => {
      const stages = t + 1;
      const size = stages < per ? offsets[stages] : total;
      const bits = s.bits.slice(0, stages);
      const indices = new Uint32Array(blocks * stages);
      for (let b = 0; b < blocks; b++) for (let u = 0; u < stages; u++) indices[b * stages + u] = encoded.indices[b * per + u];
      const prefix: Codebook = { ...codebook, size, codewords: codebook.codewords.subarray(0, size * d), usage: codebook.usage.subarray(0, size), structure: { kind: 'residual', bits, search: s.search } };
      return { codebook: prefix, encoded: { ...encoded, indices }, indexBits: bits.reduce((a, x) => a + x, 0) };
    });
  }
  throw new EngineInputError('ENGINE_UNSUPPORTED', `a ${s.kind} codebook is one flat table: it has no levels or stages`);
}

/**
 * Codes an image once with a tree or residual codebook and measures the reconstruction at every step (tree: levels
 * 0..longest path; residual: stages 1..S). With `keep`, the 8-bit pixels of that step too.
 * @returns the steps and, when asked, `pixels` (height × width × channels) of step `keep`
 */
export async function structureSteps(
  codebook: Codebook, image: PixelImage, options: EncodeOptions & { keep?: number } = {},
): Promise<StructureSteps & { pixels: Uint8Array | null }> {
  const range = stepRangeOf(codebook.structure);
  if (!range) throw new EngineInputError('ENGINE_UNSUPPORTED', `a ${codebook.structure.kind} codebook is one flat table: it has no levels or stages`);
  const { kind, first } = range;
  const encoded = await encodeImage(codebook, image, options);
  const steps: StructureStep[] = [];
  let pixels: Uint8Array | null = null;
  prefixes(codebook, encoded).forEach((p, i) => {
    options.signal?.throwIfAborted();
    const out = reconstruct(p.codebook, p.encoded);
    const mse = meanSquaredError(image.pixels, out);
    steps.push({ step: first + i, indexBits: p.indexBits, mse, psnr: psnrFromMse(mse) });
    if (options.keep === first + i) pixels = out;
  });
  if (options.keep !== undefined && !pixels) {
    throw new EngineInputError('ENGINE_INVALID_ARGUMENT', `step ${options.keep} is not one of this codebook's steps (${first}..${first + steps.length - 1})`);
  }
  return { kind, steps, pixels };
}
