import { EngineError } from './errors';

/**
 * Gives every empty cell one training vector before the centroid update: for each empty
 * cell in index order, the cell with the largest total squared error (lowest index on
 * ties) is split by moving its worst-fitting vector (largest distance, lowest index on
 * ties) into the empty cell. That vector then sits at distance 0, so the total distortion
 * can only drop, and a cell with positive error holds at least two distinct vectors, so
 * the moved vector differs from every other codeword.
 * A donor left empty is re-seeded in turn.
 * Updates indices, distances, usage and cellDistortion in place; returns the cells repaired.
 */
export function repairEmptyCells(
  indices: Uint32Array, distances: Float64Array, usage: Uint32Array, cellDistortion: Float64Array,
): number {
  const k = usage.length;
  let repaired = 0;
  // A donor holding a single vector becomes empty itself, so scan again until none is:
  // every move strictly lowers the total error, so this ends.
  for (let j = usage.indexOf(0); j >= 0; j = usage.indexOf(0)) {
    let donor = -1;
    let worst = 0;
    for (let c = 0; c < k; c++) {
      if (cellDistortion[c] > worst) {
        worst = cellDistortion[c];
        donor = c;
      }
    }
    // Not a repeat of the entry's input checks: with K distinct vectors this is reached only when float64 rounding has
    // cleared a donor's recorded error (the Math.max below) while it still holds distinct vectors, a state of the
    // numbers, not of the input. Without it `pick` stays −1 and the cell would be counted as used with no vector in it.
    if (donor < 0) {
      throw new EngineError(
        'ENGINE_TOO_FEW_DISTINCT_VECTORS',
        'an empty cell cannot be re-seeded: every cell already has zero error',
      );
    }
    let pick = -1;
    let far = -1;
    for (let v = 0; v < indices.length; v++) {
      if (indices[v] === donor && distances[v] > far) {
        far = distances[v];
        pick = v;
      }
    }
    indices[pick] = j;
    distances[pick] = 0;
    usage[donor]--;
    usage[j] = 1;
    // Float64 subtraction can leave a hair below zero; an emptied cell has no error at all.
    cellDistortion[donor] = usage[donor] === 0 ? 0 : Math.max(0, cellDistortion[donor] - far);
    cellDistortion[j] = 0;
    repaired++;
  }
  return repaired;
}
