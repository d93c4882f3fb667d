import { createHash } from 'node:crypto';
import type { CellMember, EcvqPassRequest, EcvqShardPass, ShardAssignment, ShardMove, ShardSplitSums, ShardSums, SplitRequest } from '../../engine';
import type { ColorMode } from '../../engine';
import type { ImageRef } from './tasks';

/**
 * Data-parallel training on the wire: the coordinator (wherever the training task runs) sends shard operations to
 * the shard hosts of live workers through Redis lists, and they answer shard by shard. Typed arrays travel in the
 * task wire form (tasks.ts toWire), bit for bit.
 */

/** What decides a run's training vectors: the same sample wherever it is drawn. */
export interface TrainingSample {
  images: ImageRef[];
  color: ColorMode;
  patch: { width: number; height: number };
  /** Absent: the patch side (and so the same key as a sample drawn before strides existed). */
  stride?: number;
  maxVectors: number;
  seed: number;
  meanBits: number;
  dimension: number;
}

/** One sample's identity, for the workers' caches. */
export function sampleKey(sample: TrainingSample): string {
  return createHash('sha256').update(JSON.stringify(sample)).digest('hex');
}

/** A training pass spread over shard hosts: what every host of it needs. */
export interface ShardSession {
  sessionId: string;
  jobId: number;
  teamId: number;
  sample: TrainingSample;
  /** Training vectors (checked by each host against the sample it draws). */
  n: number;
  maxK: number;
}

export type ShardOp =
  | { op: 'assign'; k: number; codewords: Float32Array }
  | { op: 'members'; cell: number; asks: { shard: number; skip: number; take: number }[] }
  | { op: 'move'; k: number; moves: ShardMove[] }
  /**
   * k-means++ step c (engine seedOverShards): codeword c is vector `index`, or the one shard `pick.shard` finds at
   * `pick.residual` of its D² total (the host answers with the pick first, then applies it); every listed shard then
   * applies codeword c to its D² and answers with its total.
   */
  | { op: 'seed'; k: number; c: number; index?: number; pick?: { shard: number; residual: number } }
  /** The sums an LBG split along principal directions needs (engine core/split.ts), on the last pass's partition. */
  | { op: 'splitSums'; request: SplitRequest }
  /** An entropy-constrained pass (engine ecvqShardPass). */
  | { op: 'ecvq'; request: EcvqPassRequest }
  /** Tree growth (engine structures/tree-shards.ts): a node's 2-means pass, its repair asks and moves, and a committed split. */
  | { op: 'treeAssign'; node: number; k: number; codewords: Float32Array }
  | { op: 'treeMembers'; node: number; cell: number; asks: { shard: number; skip: number; take: number }[] }
  | { op: 'treeMove'; node: number; k: number; moves: ShardMove[] }
  | { op: 'treeCommit'; split: TreeCommit }
  | { op: 'close' };

/** A split committed to the tree's shards: node's vectors go to left or right by the nearer of codewords (2 × d). */
export interface TreeCommit {
  node: number;
  codewords: Float32Array;
  left: number;
  right: number;
}

export interface ShardMessage {
  sessionId: string;
  seq: number;
  /** The shards to answer for (for members: those of the asks). */
  shards: number[];
  /**
   * The session's last pass (by its sequence number), to repeat first on a shard whose last pass here was another
   * one (the host took the shard over, or lost it for a while and got it back).
   */
  prime?: { seq: number; k: number; codewords: Float32Array };
  /** For a seed step sent to a host that may lack earlier codewords: the indices of codewords 0 … c − 1. */
  seedPrime?: number[];
  /**
   * For a tree op sent to a host that may not hold the shards' tree as it stands (it took them over): every split
   * committed so far, to apply to a fresh copy first; and the node's last pass, to repeat before members or moves.
   */
  treePrime?: { commits: TreeCommit[]; pass?: { seq: number; node: number; k: number; codewords: Float32Array } };
  op: ShardOp;
}

/**
 * A pass's partial, a cell's members, a move's sums, a split's sums, (seed) the shard's D² total, an
 * entropy-constrained pass, or (treeCommit) up to two distinct vectors of each side.
 */
export type ShardValue = ShardAssignment | CellMember[] | ShardSums | ShardSplitSums | number | EcvqShardPass | [Float32Array, Float32Array];

export interface ShardReply {
  seq: number;
  shard: number;
  value?: ShardValue;
  /** A seed step's chosen vector (index in the whole set), sent by the chosen shard's host before its totals. */
  pick?: number;
  /** Why the shard could not be computed (the training then fails with it). */
  error?: string;
}
