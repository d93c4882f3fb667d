import { readFileSync } from 'node:fs';
import path from 'node:path';
import { scaleLinear, ticks as d3Ticks } from 'd3';
import { describe, expect, it } from 'vitest';
import {
  bppScale,
  decadeTicks,
  finiteExtent,
  formatWithUnit,
  linearTicks,
  logDistortionScale,
  paddedDomain,
  qualityScale,
} from '../../src/components/charts/scales';
import { seriesDashes, seriesStyle } from '../../src/components/charts/series';

describe('chart scales', () => {
  it('draws the trace on a log axis where equal ratios are equal distances', () => {
    const y = logDistortionScale([850, 120, 14, 3.2], [200, 0]);
    // A logarithmic axis maps each factor of ten to the same length (definition of a log scale).
    const decade1 = y(10) - y(100);
    const decade2 = y(100) - y(1000);
    expect(decade1).toBeCloseTo(decade2, 9);
    expect(decade1).toBeGreaterThan(0);
    // Widened to whole decades: 3.2 … 850 becomes 1 … 1000.
    expect(y.domain()).toEqual([1, 1000]);
    expect(y(1)).toBe(200);
    expect(y(1000)).toBe(0);
  });

  it('ignores values a log axis cannot show', () => {
    const y = logDistortionScale([0, -4, Number.NaN, 40, 60], [100, 0]);
    expect(y.domain()).toEqual([10, 100]);
  });

  it('labels only whole decades on the log axis', () => {
    const y = logDistortionScale([0.5, 2000], [100, 0]);
    expect(decadeTicks(y).map((t) => t.value)).toEqual([0.1, 1, 10, 100, 1000, 10000]);
  });

  it('maps bits per pixel linearly', () => {
    const x = bppScale([0.0625, 0.375], [0, 600]);
    expect(x(0.25) - x(0.125)).toBeCloseTo(x(0.375) - x(0.25), 9);
  });

  it('pads the domain by a fraction of its span on each side', () => {
    expect(paddedDomain([1, 3], 0.05)).toEqual([0.9, 3.1]);
    // One value only: padded by the fraction of itself, so the point sits mid-axis.
    expect(paddedDomain([30, 30], 0.1)).toEqual([27, 33]);
    expect(paddedDomain([0, 0])).toEqual([-1, 1]);
  });

  it('never pads the rate axis below zero bits per pixel', () => {
    expect(bppScale([0.01, 1], [0, 100]).domain()[0]).toBe(0);
    expect(bppScale([0.5, 1], [0, 100]).domain()).toEqual([0.475, 1.025]);
  });

  it('rounds the quality axis outward exactly as d3 nice() does', () => {
    const ours = qualityScale([23.4, 31.7], [300, 0]);
    // Reference: d3-scale's own nice() on the same padded domain.
    const reference = scaleLinear().domain(paddedDomain([23.4, 31.7])).range([300, 0]).nice();
    expect(ours.domain()).toEqual(reference.domain());
  });

  it('chooses the ticks d3 chooses and prints them with their unit', () => {
    const x = bppScale([0.0625, 0.375], [0, 600]);
    const ticks = linearTicks(x, 6, 'bpp');
    // Reference: d3-array's ticks() over the same domain.
    expect(ticks.map((t) => t.value)).toEqual(d3Ticks(x.domain()[0], x.domain()[1], 6));
    expect(ticks[0].label).toBe('0.05\u2009bpp');
    expect(ticks[1].label).toBe('0.1\u2009bpp');
    expect(formatWithUnit(32.5, 'dB')).toBe('32.5\u2009dB');
    expect(formatWithUnit(0.1 + 0.2, 'bpp')).toBe('0.3\u2009bpp');
    expect(formatWithUnit(0.91234, '', 3)).toBe('0.912');
  });

  it('ignores non-finite values when finding the extent', () => {
    expect(finiteExtent([null, 4, Number.POSITIVE_INFINITY, -2, undefined, Number.NaN])).toEqual([-2, 4]);
    expect(finiteExtent([null])).toBeNull();
  });

  it('uses the dash patterns of the design tokens', () => {
    // The tokens are the source of truth (src/styles/app.css); the chart constants must repeat them exactly.
    const css = readFileSync(path.resolve(__dirname, '../../src/styles/app.css'), 'utf8');
    const tokens = [...css.matchAll(/--series-dash-(\d):\s*([^;]+);/g)].map((m) => [Number(m[1]), m[2].trim()] as const);
    expect(tokens).toHaveLength(seriesDashes.length);
    for (const [n, value] of tokens) expect(seriesStyle(n).dash).toBe(value);
    const colours = [...css.matchAll(/--color-series-(\d):/g)].map((m) => Number(m[1]));
    expect(colours).toEqual(tokens.map(([n]) => n));
    expect(seriesStyle(8)).toEqual(seriesStyle(1));
  });
});
