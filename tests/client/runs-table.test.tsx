import { cleanup, render, screen, within } from '@testing-library/react';
import { MemoryRouter } from 'react-router-dom';
import { afterEach, describe, expect, it } from 'vitest';
import type { RunSummary } from '../../server/contracts';
import { RunsTable } from '../../src/features/runs/components/runs-table';

afterEach(cleanup);

const run: RunSummary = {
  id: 7,
  name: 'Kelp bed sweep',
  notes: null,
  state: 'queued',
  error: null,
  createdBy: { id: 1, name: 'Mira' },
  createdAt: '2026-11-30T08:15:00.000Z',
  finishedAt: null,
  heldOutHash: 'a'.repeat(64),
  progress: 0,
  bestOperatingPoint: null,
};

describe('the runs table', () => {
  it('calls the time it shows what it is: when the run was created, not when it started', () => {
    render(
      <MemoryRouter>
        <RunsTable teamId={1} runs={[run]} />
      </MemoryRouter>,
    );
    const headers = within(screen.getByRole('table')).getAllByRole('columnheader').map((th) => th.textContent);
    expect(headers).toContain('Created');
    expect(headers).not.toContain('Started');
  });
});
