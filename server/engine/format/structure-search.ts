/**
 * The encoder's search, one function per structure kind: each takes a codebook's block vectors and returns what the
 * container codes and the decoder looks up. Adding a structure's search is one entry in STRUCTURE_SEARCHES.
 *
 * What `indices` holds (the one convention every reader of an EncodedImage follows):
 * - full, entropy-constrained, tree: one table index per block (a tree's: the node number of the leaf reached);
 * - residual: S table indices per block, block-major (stage s's codeword as its table index, offset + local index).
 * `distances` holds one squared error per block: its vector against its reconstruction (for residual, the stage sum).
 */
import { assign } from '../training';
import { encodeNearest } from '../parallel/encode-search';
import { assignEcvq } from '../training/ecvq';
import { EngineInputError } from '../input-error';
import { encodeResidual } from '../structures/residual';
import { encodeTree } from '../structures/tree';
import type { StructureKind } from '../structures/types';
import type { Codebook } from './codebook-schema';

export interface StructureSearchOptions {
  threads?: number;
  signal?: AbortSignal;
  /** The calling thread searches too (parallel/encode-search.ts): for a command-line process. */
  callerThread?: boolean;
}

export interface StructureSearchResult {
  indices: Uint32Array; // blocks, or blocks × S for residual
  distances: Float64Array; // blocks
}

/**
 * @param vectors N × d, row-major, in the codebook's vector domain (block means already removed when it is mean-removed)
 */
export type StructureSearch = (codebook: Codebook, vectors: Float32Array, dimension: number, options: StructureSearchOptions) => Promise<StructureSearchResult>;

/**
 * Nearest codeword by squared error (exact; ties to the lowest index, as the core guarantees): image blocks through
 * the encoding search, which rejects far codewords exactly in the block's transform domain; raw vectors through the
 * training search.
 */
const fullSearch: StructureSearch = (codebook, vectors, dimension, options) => {
  const patch = codebook.patch;
  if (!patch) return assign(vectors, dimension, codebook.codewords, { threads: options.threads, signal: options.signal });
  const shape = { width: patch.width, height: patch.height, channels: patch.color === 'rgb' ? 3 : 1 };
  return encodeNearest(vectors, shape, codebook.codewords, codebook.size, options);
};

/** The cell minimising ‖x − c_j‖² + λ·ℓ_j with ℓ the codebook's Huffman lengths (Chou, Lookabaugh & Gray 1989). */
const entropyConstrainedSearch: StructureSearch = async (codebook, vectors, dimension, options) => {
  if (codebook.structure.kind !== 'entropy-constrained') throw new Error('entropy-constrained search on another structure');
  options.signal?.throwIfAborted();
  const { indices, errors } = assignEcvq(vectors, dimension, codebook.codewords, codebook.structure.codeLengths, codebook.structure.lambda);
  return { indices, distances: errors };
};

/** Descent from the root to the nearer child at every level (structures/tree.ts); the index is the leaf's node number. */
const treeSearch: StructureSearch = async (codebook, vectors, dimension, options) => {
  if (codebook.structure.kind !== 'tree') throw new Error('tree search on another structure');
  options.signal?.throwIfAborted();
  const { leaves, distances } = encodeTree(codebook.codewords, codebook.structure, vectors, dimension);
  return { indices: leaves, distances };
};

/**
 * Stage by stage (structures/residual.ts), greedy or M-best as the codebook's structure.search says; each block's S
 * indices are written block-major as table indices (the stage's offset plus its local index).
 */
const residualSearch: StructureSearch = async (codebook, vectors, dimension, options) => {
  const s = codebook.structure;
  if (s.kind !== 'residual') throw new Error('residual search on another structure');
  options.signal?.throwIfAborted();
  const { indices: stages, distances } = encodeResidual(codebook.codewords, s, vectors, dimension);
  const per = s.bits.length;
  const indices = new Uint32Array(distances.length * per);
  let offset = 0;
  for (let t = 0; t < per; t++) {
    const local = stages[t];
    for (let v = 0; v < local.length; v++) indices[v * per + t] = offset + local[v];
    offset += 2 ** s.bits[t];
  }
  return { indices, distances };
};

/**
 * Per kind, its search; null where this build cannot yet encode the kind (its decoding still works: the decoder is
 * table lookup for every kind, codec.ts `reconstruct`).
 */
export const STRUCTURE_SEARCHES: Record<StructureKind, StructureSearch | null> = {
  full: fullSearch,
  'entropy-constrained': entropyConstrainedSearch,
  tree: treeSearch,
  residual: residualSearch,
};

/** Runs the codebook's own search over its block vectors. */
export async function searchStructure(codebook: Codebook, vectors: Float32Array, dimension: number, options: StructureSearchOptions = {}): Promise<StructureSearchResult> {
  const search = STRUCTURE_SEARCHES[codebook.structure.kind];
  if (!search) throw new EngineInputError('ENGINE_UNSUPPORTED', `encoding with a ${codebook.structure.kind} codebook is not wired into this build yet; it can decode such files`);
  return search(codebook, vectors, dimension, options);
}

/** Table indices the coded stream holds per block: S for residual, else 1. */
export function indicesPerBlock(codebook: Pick<Codebook, 'structure'>): number {
  return codebook.structure.kind === 'residual' ? codebook.structure.bits.length : 1;
}
