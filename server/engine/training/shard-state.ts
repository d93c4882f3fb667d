import { cellStatistics } from '../core/accumulate-centroids';
import { shardEnd, shardStart, type ShardLayout } from '../core/shard-layout';
import { EcvqShardState } from '../core/entropy-constrained';
import type { CellMember, EcvqPassRequest, EcvqShardPass, ShardAssignment, ShardMove, ShardSplitSums, ShardSums, SplitRequest } from '../core/types';
import { ShardSeeding } from '../core/init';
import { shardSplitSums } from '../core/split';
import { NearestSearch, type SearchCrew } from '../parallel/nearest-search';
import { SEED_KERNEL_MAX_COMPONENTS, SeedKernel } from '../wasm/seed-kernel';

/**
 * One shard of a training set where it is computed: its vectors, a nearest search that keeps its bounds between
 * passes, and the partition of its last pass. What it returns depends only on its vectors, the codebook and the
 * moves (see core/shard-fold.ts), so any process holding the same vectors answers with the same bits.
 */
export class ShardState {
  /** k-means++ state while a seeding runs (dropped at the first pass). */
  private seed?: { k: number; seeding: ShardSeeding };
  /** Entropy-constrained passes' search hints, from the first such pass. */
  private entropy?: EcvqShardState;

  private constructor(
    readonly shard: number,
    /** Index of the shard's first vector in the whole training set. */
    readonly offset: number,
    private readonly search: NearestSearch,
    /** The shard's vectors, n × d. */
    private readonly vectors: Float32Array,
    private readonly d: number,
  ) {}

  /** Shard s of `vectors` (the whole training set, N × d) in `layout`, on the crew's threads. */
  static async open(
    vectors: Float32Array, d: number, layout: ShardLayout, s: number, crew: SearchCrew, maxK: number, signal?: AbortSignal,
  ): Promise<ShardState> {
    const start = shardStart(layout, s);
    const slice = vectors.subarray(start * d, shardEnd(layout, s) * d);
    return new ShardState(s, start, await NearestSearch.open(slice, d, { crew, maxK, signal }), slice, d);
  }

  /**
   * The shard's k-means++ state for K codewords (core/init.ts ShardSeeding): its D² updates run on one of the crew's
   * threads over shared memory when the search has workers (the other shards' on the others, side by side), else on
   * this thread, in the WebAssembly kernel when the shard is small enough to copy (wasm/seed-kernel.ts). Cancellation
   * is checked between steps by whoever drives them.
   */
  seeding(k: number): ShardSeeding {
    if (this.seed?.k !== k) {
      const parallel = this.search.seeding(k);
      const seeding = parallel
        ? new ShardSeeding(parallel.state, parallel.update, this.offset, this.d)
        : this.vectors.length <= SEED_KERNEL_MAX_COMPONENTS
          ? this.kernelSeeding(k)
          : ShardSeeding.plain(this.vectors, this.d, k, this.offset);
      this.seed = { k, seeding };
    }
    return this.seed.seeding;
  }

  /** Seeding on this thread, its steps in the WebAssembly kernel (the shard's vectors copied in once). */
  private kernelSeeding(k: number): ShardSeeding {
    const kernel = new SeedKernel(this.vectors, this.d, k);
    return new ShardSeeding(kernel.state, (c) => kernel.step(c), this.offset, this.d);
  }

  /** A nearest-codeword pass with codewords K × d: the shard's statistics and centroid sums. */
  async assign(codewords: Float32Array, k: number, signal?: AbortSignal): Promise<ShardAssignment> {
    this.seed = undefined;
    const pass = await this.search.run(codewords, k, signal);
    const stats = cellStatistics(this.search.indices, this.search.distances, k);
    const { sums } = await this.search.partialSums(k, signal);
    return { counts: stats.usage, cellDistortion: stats.cellDistortion, total: stats.total, sums, ...pass };
  }

  /** The last pass's members of `cell`, worst first (largest distance, lowest index on ties), from `skip`, at most `take`. */
  members(cell: number, skip: number, take: number): CellMember[] {
    const { indices, distances } = this.search;
    const out: CellMember[] = [];
    for (let v = 0; v < indices.length; v++) if (indices[v] === cell) out.push({ index: this.offset + v, distance: distances[v] });
    out.sort((a, b) => b.distance - a.distance || a.index - b.index);
    return out.slice(skip, skip + take);
  }

  /** Applies the moves that fall in this shard; the new centroid sums and counts of its partition. */
  async move(moves: readonly ShardMove[], k: number, signal?: AbortSignal): Promise<ShardSums> {
    const { indices, distances } = this.search;
    for (const m of moves) {
      const v = m.index - this.offset;
      if (v < 0 || v >= indices.length) continue;
      indices[v] = m.cell;
      distances[v] = 0;
    }
    return this.search.partialSums(k, signal);
  }

  /** The sums for splitting the cells asked along their directions, on the last pass's partition (core/split.ts). */
  splitSums(request: SplitRequest): ShardSplitSums {
    return shardSplitSums(this.vectors, this.d, this.search.indices, request);
  }

  /** An entropy-constrained pass of the shard (core ecvqShardPass): its partial of the iteration. */
  ecvq(request: EcvqPassRequest): EcvqShardPass {
    this.entropy ??= new EcvqShardState(this.vectors, this.d);
    return this.entropy.pass(request);
  }

  /** Whether a vector of the whole training set is this shard's. */
  holds(index: number): boolean {
    return index >= this.offset && index < this.offset + this.search.n;
  }

  close(): void {
    this.search.close();
  }
}
