import { EngineError } from './errors';
import type { CellMember, LloydShards, ShardAssignment, ShardMove } from './types';

/**
 * Gives every empty cell one training vector before the centroid update: for each empty
 * cell in index order, the cell with the largest total squared error (lowest index on
 * ties) is split by moving its worst-fitting vector (largest distance, lowest index on
 * ties) into the empty cell. That vector then sits at distance 0, so the total distortion
 * can only drop, and a cell with positive error holds at least two distinct vectors, so
 * the moved vector differs from every other codeword.
 * A donor left empty is re-seeded in turn.
 * `worst(cell)` yields the donor's members worst first, each once. Updates usage and cellDistortion in place;
 * returns the moves in the order made.
 */
export async function repairEmptyCells(
  usage: Uint32Array, cellDistortion: Float64Array, worst: (cell: number) => Promise<CellMember>,
): Promise<ShardMove[]> {
  const k = usage.length;
  const moves: ShardMove[] = [];
  // A donor holding a single vector becomes empty itself, so scan again until none is:
  // every move strictly lowers the total error, so this ends.
  for (let j = usage.indexOf(0); j >= 0; j = usage.indexOf(0)) {
    let donor = -1;
    let most = 0;
    for (let c = 0; c < k; c++) {
      if (cellDistortion[c] > most) {
        most = cellDistortion[c];
        donor = c;
      }
    }
    // Not a repeat of the entry's input checks: with K distinct vectors this is reached only when float64 rounding has
    // cleared a donor's recorded error (the Math.max below) while it still holds distinct vectors, a state of the
    // numbers, not of the input. Without it the cell would be counted as used with no vector in it.
    if (donor < 0) {
      throw new EngineError(
        'ENGINE_TOO_FEW_DISTINCT_VECTORS',
        'an empty cell cannot be re-seeded: every cell already has zero error',
      );
    }
    const pick = await worst(donor);
    moves.push({ index: pick.index, cell: j });
    usage[donor]--;
    usage[j] = 1;
    // Float64 subtraction can leave a hair below zero; an emptied cell has no error at all.
    cellDistortion[donor] = usage[donor] === 0 ? 0 : Math.max(0, cellDistortion[donor] - pick.distance);
    cellDistortion[j] = 0;
  }
  return moves;
}

/** How many members a shard is asked for at first; later asks double. */
const FIRST_ASK = 8;

/**
 * A cell's members worst first across shards, fetched from the shards as needed: each shard lists its own members
 * worst first, and the head with the largest distance (lowest index on ties: shards hold increasing index ranges,
 * so the lower shard wins a tie) is the cell's next. One instance serves one repair step.
 */
export function worstMembers(
  executor: LloydShards, parts: readonly ShardAssignment[], signal?: AbortSignal,
): (cell: number) => Promise<CellMember> {
  const queues = new Map<number, { items: CellMember[][]; taken: number[]; asked: number[] }>();
  return async (cell) => {
    let q = queues.get(cell);
    if (!q) {
      q = { items: parts.map(() => []), taken: parts.map(() => 0), asked: parts.map(() => 0) };
      queues.set(cell, q);
    }
    const state = q;
    const refill = parts
      .map((p, s) => ({ shard: s, left: p.counts[cell] - state.taken[s] }))
      .filter(({ shard, left }) => left > 0 && state.items[shard].length === 0)
      .map(({ shard }) => ({ shard, skip: state.taken[shard], take: Math.max(FIRST_ASK, 2 * state.asked[shard]) }));
    if (refill.length > 0) {
      const lists = await executor.members(cell, refill, signal);
      refill.forEach((ask, i) => {
        state.items[ask.shard] = lists[i].slice();
        state.asked[ask.shard] = ask.take;
      });
    }
    let best = -1;
    for (let s = 0; s < parts.length; s++) {
      const head = state.items[s][0];
      if (head && (best < 0 || head.distance > state.items[best][0].distance)) best = s;
    }
    if (best < 0) throw new Error(`cell ${cell} has no member left to give`);
    state.taken[best]++;
    return state.items[best].shift()!;
  };
}
