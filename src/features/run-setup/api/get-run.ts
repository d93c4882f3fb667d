import { queryOptions, useQuery } from '@tanstack/react-query';
import { runResponse, type RunDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runSetupKeys } from './keys';

export async function getRun(teamId: number, runId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunDetail> {
  const answer = await apiRequest(`/teams/${teamId}/runs/${runId}`, { signal, schema: runResponse });
  return answer.run;
}

/** The run whose configuration the form copies; its configuration never changes, so it is fetched once. */
export const sourceRunQueryOptions = (teamId: number, runId: number) =>
  queryOptions({
    queryKey: runSetupKeys.run(teamId, runId),
    queryFn: ({ signal }) => getRun(teamId, runId, { signal }),
    staleTime: Infinity,
  });

export function useSourceRun(teamId: number, runId: number | null) {
  return useQuery({ ...sourceRunQueryOptions(teamId, runId ?? 0), enabled: runId !== null });
}
