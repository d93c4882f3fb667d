import { cleanup, fireEvent, render, screen, within } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import { BD_METHOD_LABELS, compareResponse, type BdValues, type CompareResult } from '../../server/contracts';
import { BdTable } from '../../src/features/compare/components/bd-table';
import { compareChartSeries } from '../../src/features/compare/components/compare-chart-series';
import { SeriesList } from '../../src/features/compare/components/series-list';
import { CodecBd } from '../../src/features/runs/components/codec-bd';
import { runCurveResponse } from '../../server/contracts';

afterEach(cleanup);

const full: Omit<BdValues, 'bdRate' | 'bdPsnr' | 'reason'> = {
  method: 'cubic',
  shared: { bpp: [0.25, 1.5], psnr: [28, 34.5] },
  sharedFraction: { bpp: 0.9, psnr: 0.8 },
  shortOverlap: false,
};

const point = (codebookId: number, bits: number, bpp: number, psnr: number) => ({ codebookId, bits, size: 2 ** bits, bpp, mse: 1, psnr, ssim: null, lambda: null });
const series = (runId: number, structure: 'full' | 'tree-greedy', label: string, points: ReturnType<typeof point>[]) => ({
  id: `${runId}:${structure}`, runId, structure, meanBits: 0, label, points, usablePoints: points.length, enoughPoints: points.length >= 3,
});
const run = (id: number, name: string, curves: ReturnType<typeof series>[]) => ({
  id, name, state: 'succeeded', heldOutHash: 'h'.repeat(64), color: 'luma' as const, config: {}, points: [], baselines: { jpeg: [], webp: [], avif: [] }, series: curves,
});
const kelpFull = series(1, 'full', 'Full search', [point(1, 1, 0.1, 25), point(2, 2, 0.2, 27), point(3, 3, 0.3, 29)]);
const reefFull = series(2, 'full', 'Full search', [point(4, 1, 0.1, 26), point(5, 2, 0.2, 28), point(6, 3, 0.3, 30)]);
const reefTree = series(2, 'tree-greedy', 'Tree-structured, greedy', [point(7, 2, 0.2, 27)]);
const notEnough = 'not enough points: Reef · Tree-structured, greedy has 1 usable, a BD figure needs 3';

// Parsed by the response schema, so the fixture is a shape the API can answer.
const result: CompareResult = compareResponse.parse({
  rate: 'actual',
  runs: [run(1, 'Kelp', [kelpFull]), run(2, 'Reef', [reefFull, reefTree])],
  configKeys: [],
  differingKeys: [],
  axes: { bpp: [0.1, 2], psnr: [20, 40] },
  heldOutMismatch: false,
  pairs: [{ reference: 1, test: 2, sameHeldOut: true, bdRate: -12.5, bdPsnr: 0.8, reason: null, ...full }],
  method: 'cubic',
  againstBaselines: [
    { runId: 2, codec: 'jpeg', bdRate: -30, bdPsnr: 1.5, reason: null, ...full },
    { runId: 2, codec: 'webp', bdRate: 4, bdPsnr: -0.2, reason: null, ...full, sharedFraction: { bpp: 0.2, psnr: 0.35 }, shortOverlap: true },
    { runId: 2, codec: 'avif', bdRate: null, bdPsnr: null, reason: 'no AVIF points for this held-out list', ...full, shared: { bpp: null, psnr: null } },
  ],
  seriesPairs: [
    { reference: '1:full', test: '2:full', sameHeldOut: true, bdRate: -12.5, bdPsnr: 0.8, reason: null, ...full },
    { reference: '1:full', test: '2:tree-greedy', sameHeldOut: true, bdRate: null, bdPsnr: null, reason: notEnough, ...full, shared: { bpp: null, psnr: null } },
    { reference: '2:full', test: '1:full', sameHeldOut: true, bdRate: 14.3, bdPsnr: -0.8, reason: null, ...full },
  ],
  seriesAgainstBaselines: [
    { seriesId: '2:full', runId: 2, codec: 'jpeg', bdRate: -30, bdPsnr: 1.5, reason: null, ...full },
    { seriesId: '2:full', runId: 2, codec: 'webp', bdRate: 4, bdPsnr: -0.2, reason: null, ...full, sharedFraction: { bpp: 0.2, psnr: 0.35 }, shortOverlap: true },
    { seriesId: '2:full', runId: 2, codec: 'avif', bdRate: null, bdPsnr: null, reason: 'no AVIF points for this held-out list', ...full, shared: { bpp: null, psnr: null } },
  ],
  bdMinPoints: 3,
});

const rowOf = (reference: RegExp) => screen.getAllByRole('row').find((r) => reference.test(r.textContent ?? ''))!;

describe('the Bjøntegaard table', () => {
  it('lists the compared run against JPEG, WebP and AVIF as well as against the other run', () => {
    render(<BdTable result={result} />);
    const references = within(screen.getByRole('table')).getAllByRole('row').slice(1).map((r) => r.children[1].textContent);
    expect(references).toEqual(['Kelp · Full search', 'Kelp · Full search', 'JPEG (same images)', 'WebP (same images)', 'AVIF (same images)']);
  });

  it('names each curve by its run and its structure, and says why a curve short of points has no figures', () => {
    render(<BdTable result={result} />);
    const tested = within(screen.getByRole('table')).getAllByRole('row').slice(1).map((r) => r.children[0].textContent);
    expect(tested).toEqual(['Reef · Full search', 'Reef · Tree-structured, greedy', 'Reef · Full search', 'Reef · Full search', 'Reef · Full search']);
    const treeRow = rowOf(/Tree-structured, greedy/);
    expect(within(treeRow).getByTestId('bd-rate').textContent).toBe('—');
    expect(within(treeRow).getByTestId('bd-note').textContent).toBe(notEnough);
  });
});

describe('the reference curve of the pairs', () => {
  it('shows the pairs against the first curve, then against the curve chosen, or every pair', () => {
    render(<BdTable result={result} />);
    const pairs = () => within(screen.getByRole('table')).getAllByRole('row').slice(1).filter((r) => !/same images/.test(r.children[1].textContent ?? ''))
      .map((r) => `${r.children[0].textContent} against ${r.children[1].textContent}`);
    expect(pairs()).toEqual(['Reef · Full search against Kelp · Full search', 'Reef · Tree-structured, greedy against Kelp · Full search']);
    fireEvent.change(screen.getByLabelText('Reference curve'), { target: { value: '2:full' } });
    expect(pairs()).toEqual(['Kelp · Full search against Reef · Full search']);
    fireEvent.change(screen.getByLabelText('Reference curve'), { target: { value: 'every' } });
    expect(pairs()).toHaveLength(3);
  });
});

describe('the curves compared', () => {
  it('lists one curve per structure of each run with its codebook count, and "not enough points" where BD needs more', () => {
    render(<SeriesList result={result} />);
    const rows = screen.getAllByTestId('compare-series');
    expect(rows.map((r) => [r.children[0].textContent, within(r).getByTestId('series-structure').textContent, r.children[2].textContent])).toEqual([
      ['Kelp', 'Full search', '3'], ['Reef', 'Full search', '3'], ['Reef', 'Tree-structured, greedy', '1'],
    ]);
    expect(within(rows[2]).getByTestId('series-bd-state').textContent).toBe('not enough points: 1 usable of the 3 a BD figure needs');
    expect(within(rows[0]).getByTestId('series-bd-state').textContent).toBe('3 usable points');
  });

  it('draws one chart series per structure of each run, named by run and structure', () => {
    const drawn = compareChartSeries(result);
    expect(drawn.filter((s) => s.kind === 'vq').map((s) => s.label)).toEqual(['Kelp · Full search', 'Reef · Full search', 'Reef · Tree-structured, greedy']);
  });

  it('shows beside each figure the rate and PSNR interval it is averaged over', () => {
    render(<BdTable result={result} />);
    expect(within(rowOf(/JPEG/)).getByTestId('bd-shared').textContent).toBe('0.250–1.50\u2009bpp, 28.00–34.50\u2009dB');
  });

  it('warns on a figure whose shared interval is short, and gives the reason for a missing one', () => {
    render(<BdTable result={result} />);
    expect(within(rowOf(/WebP/)).getByTestId('bd-note').textContent).toMatch(/^short overlap: the curves share 20\u2009% of the shorter rate range and 35\u2009% .*read with care$/);
    expect(within(rowOf(/JPEG/)).getByTestId('bd-note').textContent).toBe('');
    expect(within(rowOf(/AVIF/)).getByTestId('bd-note').textContent).toBe('no AVIF points for this held-out list');
  });

  it('names the fitting method the figures use', () => {
    render(<BdTable result={result} />);
    expect(screen.getByTestId('bd-method').textContent).toContain(BD_METHOD_LABELS.cubic);
    expect(screen.getByTestId('bd-method').textContent).toMatch(/nothing is extrapolated/);
  });
});

describe("a run's codebooks against the codecs", () => {
  it('shows one row per codec with its shared interval, and says the codebooks are on the actual rate', () => {
    const curve = runCurveResponse.parse({
      run: { id: 2, name: 'Reef', state: 'succeeded' },
      heldOutHash: 'h'.repeat(64),
      color: 'luma',
      points: [],
      baselines: { jpeg: [], webp: [], avif: [] },
      bd: { method: 'pchip', againstBaselines: result.againstBaselines.map(({ runId: _, ...row }) => ({ ...row, method: 'pchip' })) },
    });
    render(<CodecBd curve={curve} />);
    const references = within(screen.getByRole('table')).getAllByRole('row').slice(1).map((r) => r.children[0].textContent);
    expect(references).toEqual(['JPEG', 'WebP', 'AVIF']);
    expect(within(rowOf(/JPEG/)).getByTestId('bd-shared').textContent).toBe('0.250–1.50\u2009bpp, 28.00–34.50\u2009dB');
    expect(screen.getByTestId('bd-method').textContent).toContain(BD_METHOD_LABELS.pchip);
    expect(screen.getByTestId('bd-method').textContent).toMatch(/actual rate/);
  });
});
