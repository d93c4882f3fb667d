/**
 * The fixed shard layout of a training set: shard s holds vectors [s·size, min(n, (s+1)·size)). It depends on N
 * alone — never on threads, worker processes or machines — so every statistic the engine reduces over shards (cell
 * counts, float64 centroid sums, per-cell and total distortion) is the same bits however, and wherever, the shards
 * are computed. See README.md "Shards".
 */
export interface ShardLayout {
  /** Training vectors. */
  readonly n: number;
  /** Vectors per shard (the last one may hold fewer). */
  readonly size: number;
  /** Number of shards. */
  readonly count: number;
}

/**
 * A shard holds at least this many vectors (small sets are one shard): below it, handing a shard to another machine
 * costs more than its pass.
 */
export const MIN_SHARD_VECTORS = 16_384;
/**
 * At most this many shards. Every shard returns a dense K × d float64 partial each iteration (2 MiB at K = 4096,
 * d = 64), which the coordinator folds in order, so their number bounds the reduction's traffic and memory; 8 still
 * spreads evenly over 1, 2, 4 or 8 machines.
 */
export const MAX_SHARDS = 8;

export function shardLayout(n: number): ShardLayout {
  const count = Math.max(1, Math.min(MAX_SHARDS, Math.floor(n / MIN_SHARD_VECTORS)));
  return { n, size: Math.ceil(n / count), count };
}

/** First vector of shard s. */
export function shardStart(layout: ShardLayout, s: number): number {
  return Math.min(layout.n, s * layout.size);
}

/** One past the last vector of shard s. */
export function shardEnd(layout: ShardLayout, s: number): number {
  return Math.min(layout.n, (s + 1) * layout.size);
}
