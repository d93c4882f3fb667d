/**
 * Empirical quantile by linear interpolation between order statistics: Hyndman & Fan (1996), "Sample quantiles in
 * statistical packages", definition 7 (the default of R's quantile() and NumPy's percentile). With the n values
 * sorted ascending as s_0 ≤ … ≤ s_{n−1}, h = (n − 1)·p and Q(p) = s_⌊h⌋ + (h − ⌊h⌋)·(s_⌊h⌋+1 − s_⌊h⌋).
 */
export function empiricalQuantile(values: ArrayLike<number>, p: number): number {
  const n = values.length;
  if (n === 0) throw new RangeError('empiricalQuantile: no values');
  if (!(p >= 0 && p <= 1)) throw new RangeError('empiricalQuantile: p must be in [0, 1]');
  const sorted = Float64Array.from(values).sort();
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, n - 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/**
 * The threshold of a false-alarm rate: the (1 − rate) quantile of the training vectors' own scores. A block is flagged
 * when its score is strictly above it, so about rate·n training vectors are (within one, since the quantile
 * interpolates between two neighbouring order statistics; ties can flag fewer). With rate·n < 1 the threshold lies
 * between the two largest training scores and the rate itself cannot be measured on so few vectors.
 */
export function falseAlarmThreshold(trainingScores: ArrayLike<number>, rate: number): number {
  return empiricalQuantile(trainingScores, 1 - rate);
}

/** Values strictly above a threshold. */
export function countAbove(values: ArrayLike<number>, threshold: number): number {
  let n = 0;
  for (let i = 0; i < values.length; i += 1) if (values[i] > threshold) n += 1;
  return n;
}
