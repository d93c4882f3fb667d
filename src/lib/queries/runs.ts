import { queryOptions, useQuery } from '@tanstack/react-query';
import { runResponse, runsResponse, terminalJobStates, type RunDetail, type RunSummary } from '../../../server/contracts';
import { apiRequest } from '../api-client';
import { teamKeys } from './keys';

/** GET /teams/:teamId/runs, read by the runs page, the team home and the compare page through this one entry. */
export function listRuns(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunSummary[]> {
  return apiRequest(`/teams/${teamId}/runs`, { signal, schema: runsResponse }).then((r) => r.runs);
}

/** While any run is still working the list refreshes itself; once all are done it stops asking. */
export const runsQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: teamKeys.runList(teamId),
    queryFn: ({ signal }) => listRuns(teamId, { signal }),
    refetchInterval: (query) => (query.state.data?.some((run) => !terminalJobStates.includes(run.state)) ? 4_000 : false),
  });

export function useRuns(teamId: number) {
  return useQuery(runsQueryOptions(teamId));
}

/** GET /teams/:teamId/runs/:runId, read by the run page and the new-run form ("run again with changes"). */
export function getRun(teamId: number, runId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunDetail> {
  return apiRequest(`/teams/${teamId}/runs/${runId}`, { signal, schema: runResponse }).then((r) => r.run);
}

export const runQueryOptions = (teamId: number, runId: number) =>
  queryOptions({
    queryKey: teamKeys.runDetail(teamId, runId),
    queryFn: ({ signal }) => getRun(teamId, runId, { signal }),
  });

export function isTerminal(run: Pick<RunDetail, 'state'> | undefined): boolean {
  return run !== undefined && terminalJobStates.includes(run.state);
}
