import { cleanup, render, screen, within } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import type { WorkerSummary } from '../../server/contracts';
import { taskText, WorkersTable } from '../../src/features/workers/components/workers-table';
import { formatAgo } from '../../src/lib/format';

afterEach(cleanup);

const now = Date.parse('2026-12-05T08:00:00.000Z');
const worker = (over: Partial<WorkerSummary>): WorkerSummary => ({
  workerId: 'w-1',
  host: 'vm-1',
  threads: 4,
  startedAt: '2026-12-05T07:00:00.000Z',
  lastBeat: '2026-12-05T07:59:48.000Z',
  task: null,
  ...over,
});

describe('the workers table', () => {
  it('names a task by its kind and job, and a job of another team without its number', () => {
    expect(taskText(null)).toBe('Idle');
    expect(taskText({ kind: 'train', jobId: 12, since: '2026-12-05T07:59:00.000Z' })).toBe('Training · job #12');
    expect(taskText({ kind: 'measure', jobId: null, since: '2026-12-05T07:59:00.000Z' })).toBe("Measuring held-out images · another team's job");
  });

  it('shows each worker’s host, threads and last heartbeat relative to now', () => {
    render(<WorkersTable now={now} workers={[worker({}), worker({ workerId: 'w-2', host: 'vm-2', threads: 16, task: { kind: 'train', jobId: 7, since: '2026-12-05T07:57:00.000Z' } })]} />);
    const rows = within(screen.getByRole('table')).getAllByRole('row').slice(1);
    expect(within(rows[0]).getAllByRole('cell').map((c) => c.textContent).slice(0, 4)).toEqual(['vm-1', '4', 'Idle', '12 s ago']);
    expect(within(rows[1]).getAllByRole('cell').map((c) => c.textContent).slice(0, 3)).toEqual(['vm-2', '16', 'Training · job #7since 3 min ago']);
  });

  it('counts time in the largest whole unit', () => {
    expect(formatAgo('2026-12-05T08:00:00.000Z', now)).toBe('just now');
    expect(formatAgo('2026-12-05T06:00:00.000Z', now)).toBe('2 h ago');
    expect(formatAgo('2026-12-03T08:00:00.000Z', now)).toBe('2 days ago');
  });
});
