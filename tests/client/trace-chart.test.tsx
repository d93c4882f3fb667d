import { cleanup, render } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import { TraceChart, type TraceStep } from '../../src/components/charts/trace-chart';

afterEach(cleanup);

// An LBG sweep: sizes 1, 2, 4 in turn, distortion falling through two decades.
const steps: TraceStep[] = [
  { size: 1, iteration: 0, distortion: 900 },
  { size: 2, iteration: 0, distortion: 400 },
  { size: 2, iteration: 1, distortion: 310 },
  { size: 2, iteration: 2, distortion: 300 },
  { size: 4, iteration: 0, distortion: 150 },
  { size: 4, iteration: 1, distortion: 60 },
  { size: 4, iteration: 2, distortion: 9.5 },
];

describe('convergence trace chart', () => {
  it('draws each codebook size as its own segment with its own dash', () => {
    const { container } = render(<TraceChart title="Trace" steps={steps} />);
    const groups = [...container.querySelectorAll('g[data-size]')];
    expect(groups.map((g) => g.getAttribute('data-size'))).toEqual(['1', '2', '4']);
    const dashes = groups.map((g) => g.querySelector('path')?.getAttribute('stroke-dasharray') ?? null);
    expect(dashes).toEqual([null, '8 4', '3 3']);
  });

  it('labels the log axis in whole decades spanning the data', () => {
    const { container } = render(<TraceChart title="Trace" steps={steps} />);
    const ticks = [...container.querySelectorAll('g[data-tick]')].map((g) => Number(g.getAttribute('data-tick')));
    expect(ticks).toEqual([1, 10, 100, 1000]);
    // Decades are evenly spaced on a log axis.
    const ys = [...container.querySelectorAll('g[data-tick]')].map((g) => Number(/translate\(0,([\d.]+)\)/.exec(g.getAttribute('transform') ?? '')?.[1]));
    expect(ys[0] - ys[1]).toBeCloseTo(ys[1] - ys[2], 6);
    expect(ys[1] - ys[2]).toBeCloseTo(ys[2] - ys[3], 6);
  });

  it('writes the size where each segment starts', () => {
    const { container } = render(<TraceChart title="Trace" steps={steps} />);
    const labels = [...container.querySelectorAll('text')].map((t) => t.textContent).filter((t) => t?.startsWith('K='));
    expect(labels).toEqual(['K=1', 'K=2', 'K=4']);
  });

  it('states the final distortion of each size for screen readers', () => {
    const { container } = render(<TraceChart title="Trace" steps={steps} />);
    expect(container.querySelector('.sr-only')?.textContent).toBe('K = 1: 900.000 after 1 iterations; K = 2: 300.000 after 3 iterations; K = 4: 9.500 after 3 iterations');
  });
});
