import { cleanup, render, screen, within } from '@testing-library/react';
import { MemoryRouter } from 'react-router-dom';
import { afterEach, describe, expect, it } from 'vitest';
import type { CompareResult, RunDetail, RunSummary } from '../../server/contracts';
import { BdTable } from '../../src/features/compare/components/bd-table';
import { RunPicker } from '../../src/features/compare/components/run-picker';
import { RecentRuns } from '../../src/features/run-setup/components/recent-runs';
import { RunProgress, sizeBars } from '../../src/features/runs/components/run-progress';
import { RunStateBadge } from '../../src/features/runs/components/run-state-badge';
import { formatDb } from '../../src/features/runs/format';

afterEach(cleanup);

const finished: RunSummary = {
  id: 7,
  name: 'Kelp bed sweep',
  notes: null,
  state: 'succeeded',
  error: null,
  createdBy: { id: 1, name: 'Mira' },
  createdAt: '2026-11-30T08:15:00.000Z',
  finishedAt: '2026-11-30T08:20:00.000Z',
  heldOutHash: 'a'.repeat(64),
  progress: 1,
  bestOperatingPoint: { bits: 8, bpp: 0.5, psnr: null, codebookId: 3 },
} as RunSummary;

describe('one word for a finished run', () => {
  it('says Finished on the badge, the home page, the run page and the compare picker', () => {
    render(
      <MemoryRouter>
        <RunStateBadge state="succeeded" />
        <RecentRuns teamId={1} runs={[finished]} />
        <RunPicker runs={[finished]} selected={[]} onChange={() => {}} />
        <RunProgress
          run={
            {
              normalized: { sizes: [2] },
              codebooks: [],
              jobs: [
                { id: 1, kind: 'train', state: 'succeeded', progress: null, servedBy: [] },
                { id: 2, kind: 'evaluate', state: 'succeeded', progress: null, servedBy: [] },
              ],
            } as unknown as RunDetail
          }
        />
      </MemoryRouter>,
    );
    expect(screen.getAllByText('Finished').length).toBeGreaterThanOrEqual(4);
    expect(screen.getByText(/#7 · Finished ·/)).toBeTruthy();
    for (const raw of ['Done', 'done', 'trained', 'succeeded']) expect(screen.queryByText(raw)).toBeNull();
    expect(screen.queryByText(/succeeded/)).toBeNull();
  });
});

describe('one spelling for an exact reconstruction', () => {
  it('shows a null PSNR as ∞ (exact) on the run pages and the home page', () => {
    expect(formatDb(null)).toBe('∞ (exact)');
    render(
      <MemoryRouter>
        <RecentRuns teamId={1} runs={[finished]} />
      </MemoryRouter>,
    );
    expect(screen.getByText('∞ (exact)')).toBeTruthy();
    expect(screen.queryByText(/lossless/)).toBeNull();
  });
});

describe('the Bjøntegaard table', () => {
  it('names the run under comparison "Compared run", never "Test"', () => {
    const values = { method: 'pchip', shared: { bpp: [0.2, 1], psnr: [28, 33] }, sharedFraction: { bpp: 1, psnr: 1 }, shortOverlap: false };
    const pair = { reference: 1, test: 2, bdRate: -1, bdPsnr: 0.1, reason: null, ...values };
    const series = (runId: number) => ({ id: `${runId}:full`, runId, structure: 'full', meanBits: 0, label: 'Full search', points: [], usablePoints: 3, enoughPoints: true });
    const seriesPair = { ...pair, reference: '1:full', test: '2:full', sameHeldOut: true };
    const result = {
      runs: [{ id: 1, name: 'A', series: [series(1)] }, { id: 2, name: 'B', series: [series(2)] }], pairs: [pair], method: 'pchip', againstBaselines: [],
      seriesPairs: [seriesPair], seriesAgainstBaselines: [],
    } as unknown as CompareResult;
    render(<BdTable result={result} />);
    const headers = within(screen.getByRole('table')).getAllByRole('columnheader').map((th) => th.textContent);
    expect(headers[0]).toBe('Compared run');
    expect(headers).not.toContain('Test');
  });
});

describe('the workers that served a run', () => {
  it('names the hosts that computed each job on the run page, once each', () => {
    const served = [
      { workerId: '3f2a9c1e-0000-4000-8000-000000000001', host: 'vm-1' },
      { workerId: '3f2a9c1e-0000-4000-8000-000000000001', host: 'vm-1' },
      { workerId: 'b7d04e55-0000-4000-8000-000000000002', host: 'vm-2' },
    ];
    render(
      <RunProgress
        run={
          {
            normalized: { sizes: [2] },
            codebooks: [],
            jobs: [
              { id: 1, kind: 'train', state: 'succeeded', progress: null, servedBy: served },
              { id: 2, kind: 'evaluate', state: 'running', progress: null, servedBy: [] },
            ],
          } as unknown as RunDetail
        }
      />,
    );
    expect(screen.getByText('Computed on vm-1 (3f2a9c1e), vm-2 (b7d04e55)')).toBeTruthy();
    expect(screen.getAllByText(/^Computed on/)).toHaveLength(1);
  });
});

describe('the size bars of a run with a λ sweep', () => {
  it('fill a bar with the ladder codebook of that size, not with a λ codebook that ended with as many codewords', () => {
    const book = (id: number, lambda: number | null, iterations: number) =>
      ({ id, bits: 2, size: 4, distortion: 10, iterations, structure: 'full', lambda, checksum: 'c' });
    const bars = sizeBars({
      normalized: { sizes: [4] },
      // The λ codebook comes last, as the run's codebooks are listed: the ladder's own must still win.
      codebooks: [book(1, null, 11), book(2, 0.5, 23)],
      jobs: [{ id: 1, kind: 'train', state: 'succeeded', progress: null, servedBy: [] }],
    } as unknown as RunDetail);
    expect(bars).toHaveLength(1);
    expect(bars[0].note).toMatch(/^11 it\./);
  });
});
