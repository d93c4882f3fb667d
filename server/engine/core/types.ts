import type { InitMethod } from '../vocabulary';

export type { InitMethod };

export interface IterationStat {
  size: number;
  /** 0 is the starting codebook; n is the codebook after the n-th centroid update. */
  iteration: number;
  /** Mean squared error per vector component, from exact float64 distances. */
  distortion: number;
  /** Empty cells re-seeded before the centroid update that produced this codebook. */
  emptyRepaired: number;
  elapsedMs: number;
  /** Vectors whose nearest codeword was re-decided by the exact search (near-ties). */
  redecided?: number;
  /**
   * Vectors whose search went beyond the bound group (a block of 16 codewords, or several
   * for large codebooks) of their current codeword; the others had every other group
   * excluded by the bounds.
   */
  searched?: number;
  /**
   * Codewords moved by a kept round of shifts (core/shift-cells.ts). Such an entry stands for the whole round: its
   * iteration counts the round's updates, its distortion is where the round ended, its times and counts are summed.
   */
  shifted?: number;
}

export interface TrainProgress {
  size: number;
  targetSize: number;
  iteration: number;
  distortion: number;
  /** 0..1 over the whole run, weighting each codebook size by its cost. */
  fraction: number;
}

export interface TrainOptions {
  /** Codebook size (2^b for b in 0..14, or any explicit K ≥ 1). */
  k: number;
  init: InitMethod;
  /** Stop when (D_prev − D)/D < epsilon; default 1e-4. */
  epsilon?: number;
  /** Centroid updates per codebook size; default 100. */
  maxIterations?: number;
  /** Default 1. */
  seed?: number;
  /** K × d, row-major: when given, initialisation is skipped and one codebook is trained. */
  initialCodewords?: Float32Array;
  /** Default: what the shared thread budget grants. */
  threads?: number;
  /** Checked between iterations (and between chunks of a pass); rejects with an AbortError. */
  signal?: AbortSignal;
  onProgress?: (p: TrainProgress) => void;
  onIteration?: (s: IterationStat) => void;
  /**
   * Opens the training set's shards somewhere else (the job engine's workers); by default every shard is computed
   * in this process. Either way the codebooks are the same bits (core/shard-fold.ts).
   */
  openShards?: (set: { n: number; d: number; maxK: number; signal?: AbortSignal }) => Promise<ShardExecutor>;
}

export interface TrainedCodebook {
  size: number;
  /** size × d, row-major. */
  codewords: Float32Array;
  /** Training vectors per cell. */
  usage: Uint32Array;
  /** Total squared error per cell on the training vectors. */
  cellDistortion: Float64Array;
  /** Mean squared error per vector component on the training vectors. */
  distortion: number;
  /** Centroid updates performed. */
  iterations: number;
  trace: IterationStat[];
}

export interface TrainResult {
  dimension: number;
  vectorCount: number;
  /** split: sizes 1, 2, 4, … up to k (k last if not a power of two); otherwise one codebook. */
  codebooks: TrainedCodebook[];
}

export interface Assignment {
  indices: Uint32Array;
  /** Exact squared distance per vector, float64 accumulation. */
  distances: Float64Array;
}

/** What one nearest-codeword pass reports. */
export interface PassStats {
  /** Vectors whose near-tie was re-decided by the exact float64 search. */
  redecided: number;
  /** Vectors that searched beyond their current codeword's bound group (see assignBounded). */
  searched: number;
}

/** Usage, per-cell and total squared error of a partition. */
export interface CellStatistics {
  /** K: vectors per cell. */
  usage: Uint32Array;
  /** K: total squared error per cell. */
  cellDistortion: Float64Array;
  /** Total squared error. */
  total: number;
}

/** One shard's float64 centroid sums of its partition, formed from zero in vector order. */
export interface ShardSums {
  /** K: the shard's vectors per cell. */
  counts: Uint32Array;
  /** K × d. */
  sums: Float64Array;
}

/** What a shard returns from a nearest-codeword pass: its statistics and centroid sums (see shard-fold.ts). */
export interface ShardAssignment extends ShardSums {
  /** K: the shard's squared error per cell. */
  cellDistortion: Float64Array;
  /** The shard's total squared error. */
  total: number;
  redecided: number;
  searched: number;
}

/**
 * One shard's sums for splitting cells along given directions (core/split.ts), from its last pass's partition, each
 * formed from zero in vector order. For cell r of the request, with centre c and direction u, and t = (x − c)·u
 * summed over i = 0..d−1 in that order:
 */
export interface ShardSplitSums {
  /** m: the shard's vectors of each cell asked. */
  counts: Uint32Array;
  /** m × d: Σ (x − c)·t, the cell's scatter about c applied to u (one power-iteration step). */
  scatter: Float64Array;
  /** m: the vectors with t > 0. */
  upperCounts: Uint32Array;
  /** m × d: their float64 sum. */
  upperSums: Float64Array;
  /** m × d: the float64 sum of the others (t ≤ 0). */
  lowerSums: Float64Array;
}

/** Cells to split (ascending), their centres (m × d) and directions (m × d, float64), one row per cell. */
export interface SplitRequest {
  cells: Uint32Array;
  centres: Float32Array;
  directions: Float64Array;
}

/** A vector of a cell, by its index in the whole training set, and its squared distance to its codeword. */
export interface CellMember {
  index: number;
  distance: number;
}

/** An empty-cell repair: the vector (index in the whole training set) now belongs to `cell`, at distance 0. */
export interface ShardMove {
  index: number;
  cell: number;
}

/**
 * How k-means++ step c chooses its codeword (core/init.ts seedOverShards): the first by its index in the whole set,
 * every later one by the shard drawn and what is left of the draw's target within that shard's D² total.
 */
export type SeedChoice = { index: number } | { shard: number; residual: number };

/** What a k-means++ step returns: the chosen vector's index in the whole set and every shard's D² total after it. */
export interface SeedStep {
  index: number;
  /** In shard order; each a float64 sum over the shard's vectors in vector order. */
  totals: number[];
}

/**
 * The shards of one training set, wherever they are computed: in this process (training/local-shards.ts) or on
 * other machines (the job engine's coordinator). Every call answers for all shards, in shard order; a shard's
 * answer depends only on its vectors, the codebook and the moves, never on who computes it.
 */
export interface ShardExecutor {
  readonly count: number;
  /** A nearest-codeword pass of every shard with codewords K × d. */
  assign(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<ShardAssignment[]>;
  /**
   * The members of `cell` in the shards asked, worst first (largest distance, lowest index on ties), skipping the
   * first `skip` and returning at most `take`, from the last pass.
   */
  members(cell: number, asks: readonly { shard: number; skip: number; take: number }[], signal?: AbortSignal): Promise<CellMember[][]>;
  /** Applies repairs to the last pass's partition; returns the new sums of each shard that holds a moved vector. */
  move(moves: readonly ShardMove[], k: number, signal?: AbortSignal): Promise<Map<number, ShardSums>>;
  /**
   * k-means++ step c of a seeding for K codewords (core/init.ts seedOverShards): the codeword is `choice` (the
   * chosen shard, up to date with codewords 0 … c − 1, finds the vector within itself), and every shard then
   * applies it to its D². Steps come in order c = 0, 1, …; a seeding comes before the first pass.
   */
  seed(k: number, c: number, choice: SeedChoice, signal?: AbortSignal): Promise<SeedStep>;
  /** Every shard's sums for splitting the cells asked along their directions, on the last pass's partition. */
  splitSums(request: SplitRequest, signal?: AbortSignal): Promise<ShardSplitSums[]>;
  close(): Promise<void>;
}

/**
 * What a Lloyd pass needs of a nearest-codeword search. training/ passes in the parallel, WebAssembly-backed one
 * (parallel/nearest-search.ts), so core — the bottom layer — never imports it.
 */
export interface PassSearch {
  readonly indices: Uint32Array; // N
  readonly distances: Float64Array; // N
  run(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<PassStats>;
  accumulate(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<Uint32Array>;
}

/**
 * One pass of entropy-constrained training (training/ecvq.ts) for the shards: each vector goes to the cell minimising
 * ‖x − c_j‖² + penalties[j]. Per-shard partials follow the shard rule of shard-fold.ts.
 */
export interface EcvqPassRequest {
  /** K × d, row-major. */
  codewords: Float32Array;
  k: number;
  /** K: λ·ℓ_j, squared-error units. */
  penalties: Float64Array;
  /** K: ℓ_j in bits, summed per vector into `bits`. */
  lengths: Float64Array;
  /**
   * K: each cell's index in the starting codebook. A shard starts each vector's search from its previous cell when it
   * still knows it (speed only: the search's result does not depend on where it starts).
   */
  origin: Uint32Array;
}

/** One shard's answer to an EcvqPassRequest, each figure formed from zero in vector order. */
export interface EcvqShardPass extends ShardSums {
  /** K: squared error per cell. */
  cellDistortion: Float64Array;
  /** Total squared error. */
  total: number;
  /** Σ ℓ of the chosen cells, bits. */
  bits: number;
}

/** The shards of a training set as entropy-constrained training sees them: in this process or on workers. */
export interface EcvqShards {
  readonly count: number;
  /** Every shard's pass, in shard order. */
  ecvqPass(request: EcvqPassRequest, signal?: AbortSignal): Promise<EcvqShardPass[]>;
  close(): Promise<void>;
}

/**
 * The shards of a training set as a tree grows on them (structures/tree.ts): every shard keeps which node each of its
 * vectors has reached. Nodes are named by the grower's node numbers (root 0). A node's 2-means is core's Lloyd
 * iteration over its vectors in every shard; its partials follow the shard rule of shard-fold.ts.
 */
export interface TreeShards {
  readonly count: number;
  /** A nearest-of-K pass (exact float64, lowest index on ties) of node's vectors in every shard, in shard order. */
  nodeAssign(node: number, codewords: Float32Array, k: number, signal?: AbortSignal): Promise<ShardAssignment[]>;
  /** As ShardExecutor.members, over the node's last pass. */
  nodeMembers(node: number, cell: number, asks: readonly { shard: number; skip: number; take: number }[], signal?: AbortSignal): Promise<CellMember[][]>;
  /** As ShardExecutor.move, over the node's last pass. */
  nodeMove(node: number, moves: readonly ShardMove[], k: number, signal?: AbortSignal): Promise<Map<number, ShardSums>>;
  /**
   * The node becomes internal: each of its vectors goes to `left` or `right`, whichever of codewords (2 × d: left,
   * right) is nearer (exact float64, left on ties) — the partition of the last pass of its 2-means. Returns, per shard
   * in shard order and per side, up to two distinct vectors that went there (0, 1 or 2 rows of d), from which the
   * grower knows whether a child can split at all.
   */
  commitSplit(node: number, codewords: Float32Array, left: number, right: number, signal?: AbortSignal): Promise<[Float32Array, Float32Array][]>;
  close(): Promise<void>;
}

/** What core's Lloyd iteration needs of the shards (runLloyd, worstMembers). */
export type LloydShards = Pick<ShardExecutor, 'assign' | 'members' | 'move'>;
