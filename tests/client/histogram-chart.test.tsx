import { cleanup, render } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import { HistogramChart, histogramColumns } from '../../src/components/charts/histogram-chart';

afterEach(cleanup);

const heights = (rects: Element[]) => rects.map((r) => Number(r.getAttribute('height')));

describe('cell histogram', () => {
  it('draws one bar per cell while every cell gets a pixel, heights in proportion to the values', () => {
    const values = [0, 5, 10, 20];
    const { container } = render(<HistogramChart title="Usage" values={values} valueLabel="vectors" categoryLabel="cell" />);
    const bars = [...container.querySelectorAll('rect')];
    expect(bars).toHaveLength(4);
    const h = heights(bars);
    expect(h[0]).toBe(0);
    // A linear scale from zero: 20 is twice 10 and four times 5.
    expect(h[3] / h[2]).toBeCloseTo(2, 9);
    expect(h[3] / h[1]).toBeCloseTo(4, 9);
  });

  it('draws 16 384 cells (b = 14) as one bar per pixel column, none lower than its tallest cell', () => {
    // Usage falling off like a typical trained codebook, with one tall outlier in the middle.
    const values = Array.from({ length: 16_384 }, (_, i) => Math.round(5000 / (1 + i / 64)));
    values[9000] = 7000;
    const { container } = render(<HistogramChart title="Usage" values={values} valueLabel="vectors" categoryLabel="cell" />);
    const bars = [...container.querySelectorAll('rect')];
    // jsdom has no layout: the chart's fallback width (560 px) less its margins.
    expect(bars.length).toBeLessThanOrEqual(560);
    expect(bars.length).toBeGreaterThan(100);
    const h = heights(bars);
    const tallest = Math.max(...h);
    // The outlier's column is the tallest bar, so no single cell is lost in the merge.
    const outlierColumn = histogramColumns(values, bars.length).findIndex((c) => c.first <= 9000 && 9000 <= c.last);
    expect(h[outlierColumn]).toBe(tallest);
  });

  it('covers every cell exactly once, each column standing for the largest of its cells', () => {
    const values = Array.from({ length: 1000 }, (_, i) => (i * 7919) % 101);
    const columns = histogramColumns(values, 37);
    expect(columns).toHaveLength(37);
    let next = 0;
    for (const c of columns) {
      expect(c.first).toBe(next);
      expect(c.last).toBeGreaterThanOrEqual(c.first);
      expect(c.value).toBe(Math.max(...values.slice(c.first, c.last + 1)));
      next = c.last + 1;
    }
    expect(next).toBe(values.length);
  });

  it('shows the highlighted cell at its own height inside a merged column', () => {
    const values = Array.from({ length: 4096 }, () => 100);
    values[2048] = 40;
    const { container } = render(<HistogramChart title="Usage" values={values} valueLabel="vectors" categoryLabel="cell" highlight={2048} />);
    const marker = container.querySelector('rect[data-highlight]');
    expect(marker).not.toBeNull();
    const full = Math.max(...heights([...container.querySelectorAll('rect:not([data-highlight])')]));
    expect(Number(marker!.getAttribute('height')) / full).toBeCloseTo(0.4, 9);
  });
});
