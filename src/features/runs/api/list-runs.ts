import { queryOptions, useQuery } from '@tanstack/react-query';
import { runsResponse, terminalJobStates, type RunSummary } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

export function listRuns(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunSummary[]> {
  return apiRequest(`/teams/${teamId}/runs`, { signal, schema: runsResponse }).then((r) => r.runs);
}

/** While any run is still working the list refreshes itself; once all are done it stops asking. */
export const runsQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: runKeys.list(teamId),
    queryFn: ({ signal }) => listRuns(teamId, { signal }),
    refetchInterval: (query) => (query.state.data?.some((run) => !terminalJobStates.includes(run.state)) ? 4_000 : false),
  });

export function useRuns(teamId: number) {
  return useQuery(runsQueryOptions(teamId));
}
