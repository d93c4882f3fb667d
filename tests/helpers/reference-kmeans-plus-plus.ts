import { exactDistance } from '../../server/engine/core/exact-distance';
import { shardEnd, shardLayout, shardStart } from '../../server/engine/core/shard-layout';
import type { Rng } from '../../server/engine/core/rng';

/**
 * k-means++ seeding written out plainly (Arthur & Vassilvitskii, "k-means++: The Advantages of Careful Seeding",
 * SODA 2007, §2.2): every distance to the newest centre computed for every vector, D² kept as the minimum, the first
 * centre uniform, each next one drawn with probability proportional to D². The draw walks the training set's shards
 * in shard order (each shard's D² total summed from zero in vector order, the totals added in shard order, the shard
 * where the running sum passes the target, then that shard's vectors in order), skipping vectors at distance 0 —
 * the order the engine promises. Same random stream. Returns centres K × d, row-major.
 */
export function referenceKmeansPlusPlus(vectors: Float32Array, d: number, k: number, rng: Rng): Float32Array {
  const n = vectors.length / d;
  const layout = shardLayout(n);
  const out = new Float32Array(k * d);
  const minDist = new Float64Array(n).fill(Infinity);
  let pick = rng.nextInt(n);
  for (let c = 0; c < k; c++) {
    if (c > 0) {
      const totals: number[] = [];
      for (let s = 0; s < layout.count; s++) {
        let t = 0;
        for (let v = shardStart(layout, s); v < shardEnd(layout, s); v++) t += minDist[v];
        totals.push(t);
      }
      let total = 0;
      for (const t of totals) total += t;
      const target = rng.next() * total;
      let acc = 0;
      let before = 0;
      let shard = -1;
      for (let s = 0; s < layout.count; s++) {
        if (totals[s] === 0) continue;
        shard = s;
        before = acc;
        acc += totals[s];
        if (acc > target) break;
      }
      let inner = 0;
      for (let v = shardStart(layout, shard); v < shardEnd(layout, shard); v++) {
        if (minDist[v] === 0) continue;
        inner += minDist[v];
        pick = v;
        if (inner > target - before) break;
      }
    }
    out.set(vectors.subarray(pick * d, (pick + 1) * d), c * d);
    for (let v = 0; v < n; v++) minDist[v] = Math.min(minDist[v], exactDistance(vectors, v * d, out, c * d, d));
  }
  return out;
}
