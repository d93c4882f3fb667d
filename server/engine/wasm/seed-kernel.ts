import { codewordNorm, NORM_MARGIN, PRUNE_FACTOR, vectorNormsInto, type SeedState } from '../core/init';
import { kernelModule } from './kernel';

interface KernelExports {
  memory: WebAssembly.Memory;
  seedStep(
    xPtr: number, n: number, d: number, cPtr: number, cIdx: number, normC: number, prune: number, margin: number,
    minPtr: number, nearPtr: number, fromPtr: number, normsPtr: number, c64Ptr: number, listPtr: number, changedPtr: number, countPtr: number,
  ): number;
}

const PAGE = 65536;
/** assembly/assign-nearest.ts SEED_BLOCK: the candidate list's length. */
const SEED_BLOCK = 512;
const align = (n: number, a: number) => Math.ceil(n / a) * a;

/**
 * The largest shard (n × d components) seeded in a SeedKernel: the kernel holds a copy of the shard's vectors while
 * the seeding runs, 4 MiB at most a shard and 32 MiB for the most shards a set has (core/shard-layout MAX_SHARDS), an
 * amount the training memory estimate's per-vector and codebook terms do not rely on being free. Larger shards seed
 * with core/init seedUpdateWithTotal over the shared vectors, in place.
 */
export const SEED_KERNEL_MAX_COMPONENTS = 1 << 20;

/**
 * One shard's k-means++ state in a WebAssembly instance of its own: the shard's vectors are copied in once, and each
 * step (assembly/assign-nearest.ts seedStep) is core/init seedUpdateWithTotal computed in the kernel, the same D²,
 * nearest indices and total, bit for bit. `state`'s arrays are views of the instance's memory, which is sized once
 * here and never grown, so they stay valid for the kernel's life.
 */
export class SeedKernel {
  readonly state: SeedState;
  /** ‖x‖ of each vector (core/init vectorNormsInto), in the instance's memory. */
  readonly norms: Float64Array;
  private readonly exports: KernelExports;
  private readonly ptr: { x: number; codewords: number; min: number; near: number; from: number; norms: number; c64: number; list: number; changed: number; count: number };

  /** vectors: the shard's, n × d. `norms`, when given, are theirs already (else computed here). */
  constructor(vectors: Float32Array, readonly d: number, k: number, norms?: Float64Array) {
    const n = vectors.length / d;
    const x = 64;
    const codewords = align(x + n * d * 4, 64);
    const min = align(codewords + k * d * 4, 64);
    const near = align(min + n * 8, 64);
    const from = align(near + n * 4, 64);
    const normsAt = align(from + k * 8, 64);
    const c64 = align(normsAt + n * 8, 64);
    const list = align(c64 + d * 16, 64);
    const changed = align(list + SEED_BLOCK * 4, 64);
    const count = align(changed + n * 4, 64);
    this.ptr = { x, codewords, min, near, from, norms: normsAt, c64, list, changed, count };
    this.exports = new WebAssembly.Instance(kernelModule(), {}).exports as unknown as KernelExports;
    const have = this.exports.memory.buffer.byteLength;
    const end = count + 64;
    if (end > have) this.exports.memory.grow(Math.ceil((end - have) / PAGE));
    const buf = this.exports.memory.buffer;
    new Float32Array(buf, x, n * d).set(vectors);
    this.state = {
      codewords: new Float32Array(buf, codewords, k * d),
      minDist: new Float64Array(buf, min, n),
      nearest: new Uint32Array(buf, near, n),
      fromNewest: new Float64Array(buf, from, k),
    };
    this.norms = new Float64Array(buf, normsAt, n);
    if (norms) this.norms.set(norms);
    else vectorNormsInto(vectors, d, this.norms);
  }

  /**
   * core/init seedUpdateWithTotal(vectors, d, state, norms, c) in the kernel: state.codewords holds codeword c and
   * state.fromNewest its distances to codewords 0 … c − 1. Returns the shard's D² total.
   */
  step(c: number): number {
    const { d, ptr, state } = this;
    return this.exports.seedStep(
      ptr.x, state.minDist.length, d, ptr.codewords + c * d * 4, c, codewordNorm(state.codewords, c, d), PRUNE_FACTOR, NORM_MARGIN,
      ptr.min, ptr.near, ptr.from, ptr.norms, ptr.c64, ptr.list, ptr.changed, ptr.count,
    );
  }

  /** The vectors whose D² the last step changed, in increasing order (a view, valid until the next step). */
  changed(): Uint32Array {
    const buf = this.exports.memory.buffer;
    return new Uint32Array(buf, this.ptr.changed, new Uint32Array(buf, this.ptr.count, 1)[0]);
  }
}
