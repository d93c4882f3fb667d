import { queryOptions, useQuery } from '@tanstack/react-query';
import { runResponse, terminalJobStates, type RunDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

export function getRun(teamId: number, runId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunDetail> {
  return apiRequest(`/teams/${teamId}/runs/${runId}`, { signal, schema: runResponse }).then((r) => r.run);
}

export function isTerminal(run: Pick<RunDetail, 'state'> | undefined): boolean {
  return run !== undefined && terminalJobStates.includes(run.state);
}

export const runQueryOptions = (teamId: number, runId: number) =>
  queryOptions({
    queryKey: runKeys.detail(teamId, runId),
    queryFn: ({ signal }) => getRun(teamId, runId, { signal }),
  });

/**
 * The run, kept current by the event stream (useRunEvents writes into this cache entry). `poll` is the fallback for
 * when the stream is down: it asks every 2 s and switches itself off once the run reaches a terminal state.
 */
export function useRun(teamId: number, runId: number, { poll = false }: { poll?: boolean } = {}) {
  return useQuery({
    ...runQueryOptions(teamId, runId),
    refetchInterval: (query) => (poll && !isTerminal(query.state.data) ? 2_000 : false),
  });
}
