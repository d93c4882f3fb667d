import { queryOptions, useQuery } from '@tanstack/react-query';
import { workersResponse, type WorkersResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { teamKeys } from '../../../lib/queries/keys';

/** How often the page asks again: workers beat and take tasks continuously, so the page follows them. */
export const WORKERS_REFRESH_MS = 3_000;

export function listWorkers(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<WorkersResponse> {
  return apiRequest(`/teams/${teamId}/workers`, { signal, schema: workersResponse });
}

export const workersQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: teamKeys.workers(teamId),
    queryFn: ({ signal }) => listWorkers(teamId, { signal }),
    staleTime: 0,
    refetchInterval: WORKERS_REFRESH_MS,
  });

export function useWorkers(teamId: number) {
  return useQuery(workersQueryOptions(teamId));
}
