import { EngineError } from './errors';

const invalid = (message: string, details?: Record<string, unknown>) =>
  new EngineError('ENGINE_INVALID_INPUT', message, details);

/** Checks a vector set (N × d); returns N. Kernels downstream trust what passes here. */
export function checkVectors(vectors: unknown, dimension: unknown, what = 'vectors'): number {
  if (!(vectors instanceof Float32Array)) throw invalid(`${what} must be a Float32Array`);
  if (!Number.isInteger(dimension) || (dimension as number) < 1) {
    throw invalid('dimension must be a positive integer', { dimension });
  }
  const d = dimension as number;
  if (vectors.length % d !== 0) {
    throw invalid(`${what} length ${vectors.length} is not a multiple of the dimension ${d}`);
  }
  const n = vectors.length / d;
  if (n < 1) throw invalid(`${what} must hold at least one vector`);
  for (let i = 0; i < vectors.length; i++) {
    if (!Number.isFinite(vectors[i])) {
      throw invalid(`${what} hold a non-finite value at vector ${Math.floor(i / d)}, component ${i % d}`);
    }
  }
  return n;
}

export function checkInteger(name: string, value: unknown, min: number, max = Number.MAX_SAFE_INTEGER): number {
  if (!Number.isInteger(value) || (value as number) < min || (value as number) > max) {
    throw invalid(`${name} must be an integer in ${min}..${max}`, { [name]: value });
  }
  return value as number;
}

export function checkNumber(name: string, value: unknown, min: number, max: number, openMin = false): number {
  const v = value as number;
  if (typeof value !== 'number' || !Number.isFinite(v) || v > max || v < min || (openMin && v === min)) {
    throw invalid(`${name} must be a number in ${openMin ? '(' : '['}${min}, ${max}]`, { [name]: value });
  }
  return v;
}

/**
 * Counts distinct vectors, stopping once `limit` are found (so a large set costs one
 * pass at most). Values compare by float32 bit pattern, except that −0 equals +0.
 */
export function countDistinctUpTo(vectors: Float32Array, d: number, limit: number): number {
  const n = vectors.length / d;
  const bits = new Uint32Array(vectors.buffer, vectors.byteOffset, vectors.length);
  const buckets = new Map<number, number[]>();
  let distinct = 0;
  const key = (v: number) => {
    let h1 = 0x811c9dc5;
    let h2 = 0x9747b28c;
    for (let i = 0; i < d; i++) {
      const w = bits[v * d + i] === 0x80000000 ? 0 : bits[v * d + i];
      h1 = Math.imul(h1 ^ w, 0x01000193);
      h2 = Math.imul(h2 ^ w, 0x5bd1e995) ^ (h2 >>> 15);
    }
    return (h1 >>> 0) * 2097152 + ((h2 >>> 0) & 0x1fffff);
  };
  const same = (a: number, b: number) => {
    for (let i = 0; i < d; i++) if (vectors[a * d + i] !== vectors[b * d + i]) return false;
    return true;
  };
  for (let v = 0; v < n && distinct < limit; v++) {
    const h = key(v);
    const list = buckets.get(h);
    if (!list) {
      buckets.set(h, [v]);
      distinct++;
    } else if (!list.some((u) => same(u, v))) {
      list.push(v);
      distinct++;
    }
  }
  return distinct;
}
