import { QueryClientProvider } from '@tanstack/react-query';
import { act, cleanup, render, renderHook, screen, waitFor } from '@testing-library/react';
import type { ReactNode } from 'react';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { RunSummary } from '../../server/contracts';
import { useCreateRun } from '../../src/features/run-setup/api/create-run';
import { RunPicker } from '../../src/features/compare/components/run-picker';
import { createQueryClient } from '../../src/lib/query-client';
import { teamKeys } from '../../src/lib/queries/keys';
import { useRuns } from '../../src/lib/queries/runs';
import { runDetailOf, runSummaryOf } from './support/runs';
import { sendJson, setPageOrigin, startHttpServer } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

/** The compare page's picker as the route wires it: the shared runs query of the team. */
function ComparePicker({ teamId }: { teamId: number }) {
  const runs = useRuns(teamId);
  return runs.data ? <RunPicker runs={runs.data} selected={[]} onChange={() => {}} /> : null;
}

describe('one read layer for runs', () => {
  let server: Server;
  let runs: RunSummary[];

  beforeEach(async () => {
    runs = [runSummaryOf(1), runSummaryOf(2)];
    server = await startHttpServer((request, res) => {
      if (request.method === 'GET' && request.url === '/api/teams/1/runs') return sendJson(res, 200, { runs });
      if (request.method === 'POST' && request.url === '/api/teams/1/runs') {
        runs = [...runs, runSummaryOf(3, { name: 'Fresh sweep' })];
        return sendJson(res, 201, { run: runDetailOf(3, { name: 'Fresh sweep' }) });
      }
      return sendJson(res, 404, { error: { code: 'not_found', message: 'No such thing' } });
    });
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    cleanup();
    await server.close();
  });

  it('refreshes the compare page’s run list after a new run is created', async () => {
    const client = createQueryClient();
    const wrapper = ({ children }: { children: ReactNode }) => <QueryClientProvider client={client}>{children}</QueryClientProvider>;
    render(<ComparePicker teamId={1} />, { wrapper });
    await screen.findByText('Sweep 2');
    expect(screen.queryByText('Fresh sweep')).toBeNull();

    const { result } = renderHook(() => useCreateRun(1), { wrapper });
    await act(() => result.current.mutateAsync({ name: 'Fresh sweep', trainingSetId: 1, heldOutSetId: 1, patch: { width: 4, height: 4 }, bits: 2 }));

    // The list is fresh for 30 s by default, so only an invalidation can bring the new run in.
    await waitFor(() => expect(screen.getByText('Fresh sweep')).toBeTruthy());
    expect(server.requests.filter((r) => r.method === 'GET')).toHaveLength(2);
  });

  it('keys every team’s run reads under one prefix', () => {
    expect(teamKeys.runList(4).slice(0, 3)).toEqual(['teams', 4, 'runs']);
    expect(teamKeys.runDetail(4, 9).slice(0, 3)).toEqual(['teams', 4, 'runs']);
    expect(teamKeys.setImages(4, 2, 'held-out').slice(0, 3)).toEqual(['teams', 4, 'image-sets']);
  });
});
