import { createRng } from '../server/engine';

/** The bench's training set: n × d standard normal values from the engine's seeded generator. */
export function benchVectors(n: number, d: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const out = new Float32Array(n * d);
  for (let i = 0; i < out.length; i++) out[i] = rng.normal();
  return out;
}
