import { cleanup, render, screen, within } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import type { CompareResult, RunDetail } from '../../server/contracts';
import { ConfigDiff } from '../../src/features/compare/components/config-diff';
import { RunConfig } from '../../src/features/runs/components/run-config';

afterEach(cleanup);

const normalized: RunDetail['normalized'] = {
  trainingImageIds: [1, 2],
  heldOutImageIds: [3],
  patch: { width: 4, height: 4 },
  color: 'luma',
  meanBits: 0,
  bits: { from: 1, to: 3 },
  sizes: [2, 4, 8],
  init: 'random',
  epsilon: 1e-4,
  maxIterations: 100,
  maxVectors: 200_000,
  seed: 1,
};

describe('run settings as people read them', () => {
  it('calls random init on the run page what it does: random training vectors', () => {
    render(<RunConfig run={{ normalized } as RunDetail} />);
    expect(screen.getByText('Random training vectors')).toBeTruthy();
    expect(screen.queryByText(/random codewords/)).toBeNull();
    expect(screen.getByText('Maximum iterations')).toBeTruthy();
    expect(screen.getByText('Vector cap')).toBeTruthy();
  });

  it('labels the compare table rows as the run page does, not with raw keys', () => {
    const result = {
      configKeys: ['bits.from', 'init', 'maxIterations', 'maxVectors'],
      differingKeys: ['init'],
      runs: [
        { id: 1, name: 'A', config: { 'bits.from': 1, init: 'split', maxIterations: 100, maxVectors: 200_000 } },
        { id: 2, name: 'B', config: { 'bits.from': 1, init: 'kmeans++', maxIterations: 100, maxVectors: 200_000 } },
      ],
    } as unknown as CompareResult;
    render(<ConfigDiff result={result} />);
    const table = screen.getByRole('table');
    const rowHeads = within(table).getAllByRole('rowheader').map((th) => th.textContent);
    expect(rowHeads).toEqual(['Initialisationdiffers', 'Lowest b', 'Maximum iterations', 'Vector cap']);
    expect(within(table).getByText('LBG splitting')).toBeTruthy();
    expect(within(table).getByText('k-means++ seeding')).toBeTruthy();
  });
});
