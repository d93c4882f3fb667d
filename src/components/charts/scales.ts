import { scaleLinear, scaleLog, type ScaleLinear, type ScaleLogarithmic } from 'd3';

/** [min, max] of the finite values, or null when there are none. */
export function finiteExtent(values: Iterable<number | null | undefined>): [number, number] | null {
  let min = Infinity;
  let max = -Infinity;
  for (const v of values) {
    if (v === null || v === undefined || !Number.isFinite(v)) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return min <= max ? [min, max] : null;
}

/**
 * Widens [min, max] by `fraction` of its span on each side so end points and their markers are not clipped by the
 * frame. A zero span (one point, or all equal) gets ±`fraction` of the value itself, or ±1 at zero.
 */
export function paddedDomain([min, max]: [number, number], fraction = 0.05): [number, number] {
  const span = max - min;
  if (span > 0) return [min - span * fraction, max + span * fraction];
  const half = min === 0 ? 1 : Math.abs(min) * fraction;
  return [min - half, max + half];
}

/**
 * Rate axis: linear in bits per pixel. The padded domain never reaches below 0 bpp, because a negative rate has no
 * meaning and an axis that suggests one misleads.
 */
export function bppScale(extent: [number, number], range: [number, number], fraction = 0.05): ScaleLinear<number, number> {
  const [lo, hi] = paddedDomain(extent, fraction);
  return scaleLinear().domain([Math.max(0, lo), hi]).range(range);
}

/** Quality axis (PSNR dB, MSE, SSIM): linear, padded, rounded outward to tick values. */
export function qualityScale(extent: [number, number], range: [number, number], fraction = 0.05): ScaleLinear<number, number> {
  return scaleLinear().domain(paddedDomain(extent, fraction)).range(range).nice();
}

/**
 * Distortion during Lloyd iterations falls by orders of magnitude from the first split to convergence, so the trace is
 * drawn on a log axis where equal ratios are equal distances. Non-positive values have no place on it and are ignored;
 * the domain is widened to whole powers of ten so there is always a labelled decade at each end.
 */
export function logDistortionScale(values: Iterable<number>, range: [number, number]): ScaleLogarithmic<number, number> {
  const positive = [...values].filter((v) => Number.isFinite(v) && v > 0);
  const extent = finiteExtent(positive) ?? [1, 10];
  const lo = 10 ** Math.floor(Math.log10(extent[0]));
  let hi = 10 ** Math.ceil(Math.log10(extent[1]));
  if (hi <= lo) hi = lo * 10;
  return scaleLog().domain([lo, hi]).range(range);
}

/** Units a chart prints after a number; '' for unitless quantities (SSIM) and for MSE, which is in squared code values. */
export type Unit = 'bpp' | 'dB' | 'bytes' | '';

const siSpace = '\u2009';

/** A number with its unit, as every axis tick and read-out shows it ("0.5 bpp", "32.1 dB"). */
export function formatWithUnit(value: number, unit: Unit, digits?: number): string {
  const text = digits === undefined ? trimNumber(value) : value.toFixed(digits);
  if (unit === '') return text;
  return `${text}${siSpace}${unit}`;
}

/** Shortest readable form of a tick value: no float noise such as 0.30000000000000004. */
export function trimNumber(value: number): string {
  if (value === 0) return '0';
  const abs = Math.abs(value);
  if (abs >= 1000 || abs < 0.001) return value.toExponential(1).replace('e+', 'e');
  return String(Number(value.toPrecision(4)));
}

export type Tick = { value: number; label: string };

/** Ticks of a linear scale (d3's own tick choice), labelled with the unit. */
export function linearTicks(scale: ScaleLinear<number, number>, count: number, unit: Unit): Tick[] {
  return scale.ticks(count).map((value) => ({ value, label: formatWithUnit(value, unit) }));
}

/** Decades only on a log axis: intermediate ticks crowd a short axis and add nothing a reader uses. */
export function decadeTicks(scale: ScaleLogarithmic<number, number>): Tick[] {
  const [lo, hi] = scale.domain();
  const ticks: Tick[] = [];
  for (let e = Math.round(Math.log10(lo)); 10 ** e <= hi * 1.0000001; e += 1) {
    const value = 10 ** e;
    ticks.push({ value, label: e >= -2 && e <= 5 ? String(Number(value.toPrecision(1))) : `1e${e}` });
  }
  return ticks;
}
