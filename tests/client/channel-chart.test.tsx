import { cleanup, render, screen } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import { ChannelChart } from '../../src/components/charts/channel-chart';

afterEach(cleanup);

const points = [
  { ber: 1e-4, measured: 31.9, expected: 31.95 },
  { ber: 1e-3, measured: 30.2, expected: 30.1 },
  { ber: 1e-2, measured: 24.5, expected: 24.7 },
  { ber: 1e-1, measured: 14.2, expected: 14.0 },
];

describe('ChannelChart', () => {
  it('draws the measured curve with a point per rate and the expected curve dashed', () => {
    const { container } = render(<ChannelChart title="PSNR against BER" points={points} />);
    expect(screen.getByRole('img', { name: 'PSNR against BER' })).toBeTruthy();
    const measured = container.querySelector('path[data-series="measured"]')!;
    const expected = container.querySelector('path[data-series="expected"]')!;
    // One move and three line segments each.
    expect(measured.getAttribute('d')?.match(/L/g)).toHaveLength(3);
    expect(expected.getAttribute('d')?.match(/L/g)).toHaveLength(3);
    expect(expected.getAttribute('stroke-dasharray')).toBe('5 3');
    expect(container.querySelectorAll('circle')).toHaveLength(4);
    // The rate axis is logarithmic: equal steps between decades.
    const xs = [...(measured.getAttribute('d') ?? '').matchAll(/[ML]([\d.]+),/g)].map((m) => Number(m[1]));
    // d3 writes path coordinates to three decimals.
    expect(xs[2] - xs[1]).toBeCloseTo(xs[1] - xs[0], 2);
    expect(screen.getByText('expected (closed form)')).toBeTruthy();
  });

  it('leaves the expected curve and its legend out when the closed form was not computed', () => {
    const { container } = render(<ChannelChart title="PSNR against BER" points={points.map((p) => ({ ...p, expected: null }))} />);
    expect(container.querySelector('path[data-series="expected"]')).toBeNull();
    expect(screen.queryByText('expected (closed form)')).toBeNull();
  });

  it('leaves an exact reconstruction\'s PSNR (null) out of the line', () => {
    const { container } = render(<ChannelChart title="PSNR against BER" points={[{ ber: 1e-5, measured: null, expected: null }, ...points]} />);
    expect(container.querySelectorAll('circle')).toHaveLength(4);
  });
});
