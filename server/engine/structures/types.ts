// The kinds are the run vocabulary's (one definition); the JSON format and the container mirror them.
export { STRUCTURE_KINDS, type StructureKind } from '../vocabulary';

/** Full search over K codewords; index = fixed-length ceil(log2 K) bits. */
export interface FullStructure { kind: 'full' }
/** Full search minimising d + λ·len; indices coded with a canonical Huffman code whose lengths (1..16) are stored per codeword. */
export interface EntropyConstrainedStructure { kind: 'entropy-constrained'; lambda: number; codeLengths: Uint8Array }
/**
 * Binary tree. `codewords` (the codebook's table) holds every node's codeword, node 0 is the root, nodes in breadth-first order.
 * children[2n], children[2n+1] are node n's left and right child, or -1 for a leaf. The coded index of a block is its path
 * from the root (0 = left, 1 = right), a prefix code: fixed b bits when the tree is balanced to depth b.
 */
export interface TreeStructure { kind: 'tree'; children: Int32Array; balanced: boolean }
/**
 * S stages; stage s has 2^bits[s] codewords, stored one after another in the table (stage 0 first). A block's reconstruction
 * is the sum of one codeword per stage; its index is the S stage indices, bits[s] bits each (rate Σ bits[s] per block).
 * search: greedy stage by stage, or M-best (keep the M best partial sums per stage).
 */
export interface ResidualStructure { kind: 'residual'; bits: number[]; search: { kind: 'greedy' } | { kind: 'm-best'; m: number } }
export type CodebookStructure = FullStructure | EntropyConstrainedStructure | TreeStructure | ResidualStructure;
