import { EcvqShardState } from '../core/entropy-constrained';
import { throwIfAborted } from '../core/errors';
import { seedSteps } from '../core/init';
import { shardEnd, shardLayout, shardStart } from '../core/shard-layout';
import type { EcvqShards, ShardExecutor, ShardSums } from '../core/types';
import { SearchCrew } from '../parallel/nearest-search';
import { ShardState } from './shard-state';

/**
 * Every shard of a training set in this process, one after another on one crew of threads (each shard's pass
 * and k-means++ step spreads over all of them). The single-machine engine trains through this; the job engine's coordinator reaches
 * the same ShardState on other machines.
 */
export async function openLocalShards(
  vectors: Float32Array, d: number, options: { threads?: number; maxK: number; signal?: AbortSignal },
): Promise<ShardExecutor> {
  const layout = shardLayout(vectors.length / d);
  const crew = await SearchCrew.open(options.threads, options.signal);
  const shards: ShardState[] = [];
  try {
    for (let s = 0; s < layout.count; s++) shards.push(await ShardState.open(vectors, d, layout, s, crew, options.maxK, options.signal));
  } catch (err) {
    for (const shard of shards) shard.close();
    crew.close();
    throw err;
  }
  const seeding = seedSteps(vectors, d, options.maxK, shards.map((shard) => ({ seeding: (k: number) => shard.seeding(k) })));
  return {
    count: layout.count,
    seed: seeding.seed,
    async assign(codewords, k, signal) {
      const out = [];
      for (const shard of shards) out.push(await shard.assign(codewords, k, signal));
      return out;
    },
    async members(cell, asks) {
      return asks.map((a) => shards[a.shard].members(cell, a.skip, a.take));
    },
    async move(moves, k, signal) {
      const out = new Map<number, ShardSums>();
      for (const shard of shards) {
        if (moves.some((m) => shard.holds(m.index))) out.set(shard.shard, await shard.move(moves, k, signal));
      }
      return out;
    },
    async splitSums(request) {
      return shards.map((shard) => shard.splitSums(request));
    },
    async close() {
      for (const shard of shards) shard.close();
      crew.close();
    },
  };
}

/**
 * Every shard of a training set in this process for entropy-constrained training, one after another on this thread
 * (the same shard layout as openLocalShards, so the same partials as the job engine's workers compute).
 */
export function openLocalEcvqShards(vectors: Float32Array, d: number): EcvqShards {
  const layout = shardLayout(vectors.length / d);
  const shards = Array.from({ length: layout.count }, (_, s) => new EcvqShardState(vectors.subarray(shardStart(layout, s) * d, shardEnd(layout, s) * d), d));
  return {
    count: layout.count,
    async ecvqPass(request, signal) {
      const out = [];
      for (const shard of shards) {
        throwIfAborted(signal);
        out.push(shard.pass(request));
      }
      return out;
    },
    async close() {},
  };
}
