import { cleanup, fireEvent, render, screen, within } from '@testing-library/react';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { focusedExtents, RdChart, type RdSeries } from '../../src/components/charts/rd-chart';
import { curveSeries } from '../../src/features/runs/components/rd-panel';
import type { RunCurve } from '../../server/contracts';

afterEach(cleanup);

const curve: RunCurve = {
  run: { id: 7, name: 'Luma 4×4 sweep', state: 'succeeded' },
  heldOutHash: 'a'.repeat(64),
  color: 'luma',
  bd: { method: 'pchip', againstBaselines: [] },
  points: [2, 1, 3].map((bits) => ({
    codebookId: 100 + bits,
    bits,
    size: 2 ** bits,
    structure: 'full' as const,
    lambda: null,
    bppFixed: bits / 16,
    bppEntropy: (bits - 0.3) / 16,
    bppActual: (bits + 0.4) / 16,
    bppRaw: (bits + 0.35) / 16,
    mse: 200 / bits,
    psnr: 10 * Math.log10((255 * 255 * bits) / 200),
    ssim: 0.5 + bits / 10,
    lossless: false,
  })),
  baselines: {
    jpeg: [10, 50, 90].map((quality) => ({ quality, bpp: quality / 60, mse: 120 / quality, psnr: 24 + quality / 10, ssim: 0.6 + quality / 300 })),
    webp: [],
    avif: [],
  },
};

function paths(container: HTMLElement) {
  return [...container.querySelectorAll('path[data-series]')] as SVGPathElement[];
}

describe('rate–distortion chart', () => {
  it('draws one path per series, each with its own dash', () => {
    const series = curveSeries(curve, 'psnr');
    const { container } = render(<RdChart title="RD" series={series} yLabel="PSNR" yUnit="dB" />);
    const drawn = paths(container);
    expect(drawn.map((p) => p.dataset.series)).toEqual(['fixed', 'entropy', 'actual', 'raw', 'jpeg']);
    // Dashes of --series-dash-1…4 and --series-dash-7 (src/styles/app.css): solid, long, short, dash-dot, dense.
    expect(drawn.map((p) => p.getAttribute('stroke-dasharray'))).toEqual([null, '8 4', '3 3', '8 3 2 3', '5 2']);
    expect(new Set(drawn.map((p) => p.getAttribute('stroke'))).size).toBe(5);
    // Every path passes through all its points: one move and (n − 1) line segments.
    for (const p of drawn) expect(p.getAttribute('d')?.match(/L/g)).toHaveLength(2);
  });

  it('leaves out codecs the server could not measure', () => {
    const withWebp = { ...curve, baselines: { ...curve.baselines, webp: curve.baselines.jpeg } };
    const { container } = render(<RdChart title="RD" series={curveSeries(withWebp, 'psnr')} yLabel="PSNR" yUnit="dB" />);
    expect(paths(container).map((p) => p.dataset.series)).toEqual(['fixed', 'entropy', 'actual', 'raw', 'jpeg', 'webp']);
  });

  it('orders each VQ line by bit budget, so the path runs left to right', () => {
    const { container } = render(<RdChart title="RD" series={curveSeries(curve, 'psnr')} yLabel="PSNR" yUnit="dB" />);
    const d = paths(container)[0].getAttribute('d') ?? '';
    const xs = [...d.matchAll(/[ML]([\d.]+),/g)].map((m) => Number(m[1]));
    expect(xs).toHaveLength(3);
    expect([...xs].sort((a, b) => a - b)).toEqual(xs);
  });

  it('makes every codebook point a link that opens its codebook', () => {
    const onSelect = vi.fn();
    render(<RdChart title="RD" series={curveSeries(curve, 'psnr')} yLabel="PSNR" yUnit="dB" onSelectPoint={(point) => onSelect(point.target)} />);
    const figure = screen.getByRole('img', { name: 'RD' });
    const links = within(figure).getAllByRole('link');
    // Three codebooks on four rate definitions; JPEG points open nothing.
    expect(links).toHaveLength(12);
    fireEvent.click(links[0]);
    fireEvent.keyDown(links[1], { key: 'Enter' });
    expect(onSelect.mock.calls.map((c) => c[0])).toEqual(['101', '102']);
  });

  it('reads out the focused point with units', () => {
    render(<RdChart title="RD" series={curveSeries(curve, 'psnr')} yLabel="PSNR" yUnit="dB" onSelectPoint={() => undefined} />);
    const link = screen.getAllByRole('link')[0];
    fireEvent.focus(link);
    const readout = screen.getByRole('status');
    expect(readout.textContent).toContain('VQ · fixed rate · b = 1 (K = 2)');
    expect(readout.textContent).toContain('0.063\u2009bpp');
    expect(readout.textContent).toMatch(/PSNR 25\.\d\d\u2009dB/);
  });

  it('switches the quality measure without changing the series', () => {
    const series: RdSeries[] = curveSeries(curve, 'ssim');
    expect(series[0].points.map((p) => p.y)).toEqual([0.6, 0.7, 0.8]);
    const { container } = render(<RdChart title="RD" series={series} yLabel="SSIM" yUnit="" yDigits={4} />);
    expect(paths(container)).toHaveLength(5);
    const yLabels = [...container.querySelectorAll('text')].map((t) => t.textContent);
    expect(yLabels).toContain('SSIM');
  });

  it('breaks a line at a lossless point instead of inventing a PSNR', () => {
    const lossless: RdSeries = { id: 'vq', label: 'VQ', kind: 'vq', color: 'red', dash: 'none', points: [{ x: 0.1, y: 20, label: 'a' }, { x: 0.2, y: null, label: 'b' }, { x: 0.3, y: 30, label: 'c' }] };
    const { container } = render(<RdChart title="RD" series={[lossless]} yLabel="PSNR" yUnit="dB" />);
    // d3-shape's line().defined() starts a new subpath after an undefined point: two moves, no line segment.
    const d = paths(container)[0].getAttribute('d') ?? '';
    expect(d.match(/M/g)).toHaveLength(2);
    expect(d.match(/L/g)).toBeNull();
  });

  it('focuses the frame on the VQ rates and hides reference points beyond it', () => {
    const series = curveSeries(curve, 'psnr');
    const focused = focusedExtents(series)!;
    // VQ rates reach 3.4 / 16 bpp (actual rate at b = 3); the frame runs 60 % further.
    expect(focused.x[0]).toBe(0);
    expect(focused.x[1]).toBeCloseTo((3.4 / 16) * 1.6, 12);
    const { container } = render(<RdChart title="RD" series={series} yLabel="PSNR" yUnit="dB" xExtent={focused.x} yExtent={focused.y} />);
    // JPEG at q 10 (0.167 bpp) is inside; q 50 and q 90 (0.83, 1.5 bpp) fall outside and get no marker.
    expect(container.querySelectorAll('g[data-point="jpeg"]')).toHaveLength(1);
    expect(container.querySelectorAll('g[data-point="fixed"]')).toHaveLength(3);
  });
});
