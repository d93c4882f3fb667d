/**
 * Seeded generator: xoshiro128** (Blackman & Vigna, "Scrambled linear pseudorandom number
 * generators", 2018), its 128-bit state filled from the seed by SplitMix32. 32-bit integer
 * arithmetic only, so the stream is identical on every platform and thread.
 */
export interface Rng {
  /** Uniform in [0, 1) with 53 random bits. */
  next(): number;
  /** Uniform integer in [0, n), unbiased (rejection sampling); n in 1..2^32. */
  nextInt(n: number): number;
  /** Standard normal by the Marsaglia polar method. */
  normal(): number;
}

export function createRng(seed: number): Rng {
  if (!Number.isFinite(seed)) throw new RangeError('createRng: seed must be a finite number');
  let x = Math.trunc(seed) >>> 0;
  // High bits of large seeds also matter, so seeds 1 and 2^32 + 1 differ.
  const high = Math.floor(Math.abs(Math.trunc(seed)) / 4294967296) >>> 0;
  const splitmix = (): number => {
    x = (x + 0x9e3779b9) | 0;
    let z = x ^ high;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
    return (z ^ (z >>> 16)) >>> 0;
  };
  let s0 = splitmix();
  let s1 = splitmix();
  let s2 = splitmix();
  let s3 = splitmix();
  if ((s0 | s1 | s2 | s3) === 0) s0 = 1;

  const nextU32 = (): number => {
    const result = Math.imul(rotl(Math.imul(s1, 5), 7), 9) >>> 0;
    const t = s1 << 9;
    s2 ^= s0;
    s3 ^= s1;
    s1 ^= s2;
    s0 ^= s3;
    s2 ^= t;
    s3 = rotl(s3, 11);
    return result;
  };

  let spare: number | undefined;
  return {
    next() {
      const hi = nextU32() >>> 5; // 27 bits
      const lo = nextU32() >>> 6; // 26 bits
      return (hi * 67108864 + lo) / 9007199254740992;
    },
    nextInt(n: number) {
      if (!Number.isInteger(n) || n < 1 || n > 4294967296) {
        throw new RangeError('nextInt: n must be an integer in 1..2^32');
      }
      // Largest multiple of n below 2^32: draws at or above it are rejected to stay unbiased.
      const limit = 4294967296 - (4294967296 % n);
      for (;;) {
        const r = nextU32();
        if (r < limit) return r % n;
      }
    },
    normal() {
      if (spare !== undefined) {
        const s = spare;
        spare = undefined;
        return s;
      }
      for (;;) {
        const u = 2 * this.next() - 1;
        const v = 2 * this.next() - 1;
        const s = u * u + v * v;
        if (s > 0 && s < 1) {
          const f = Math.sqrt((-2 * Math.log(s)) / s);
          spare = v * f;
          return u * f;
        }
      }
    },
  };
}

function rotl(v: number, k: number): number {
  return (v << k) | (v >>> (32 - k));
}
