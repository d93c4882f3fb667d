import { queryOptions, useQuery } from '@tanstack/react-query';
import { runsResponse, terminalJobStates, type RunSummary } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runSetupKeys } from './keys';

export async function listRuns(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunSummary[]> {
  const answer = await apiRequest(`/teams/${teamId}/runs`, { signal, schema: runsResponse });
  return answer.runs;
}

/** The team's runs for the team home; while any is still working the list refreshes itself, then stops. */
export const recentRunsQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: runSetupKeys.recentRuns(teamId),
    queryFn: ({ signal }) => listRuns(teamId, { signal }),
    staleTime: 0,
    refetchInterval: (query) => (query.state.data?.some((run) => !terminalJobStates.includes(run.state)) ? 5_000 : false),
  });

export function useRecentRuns(teamId: number) {
  return useQuery(recentRunsQueryOptions(teamId));
}
