import { queryOptions, useQuery } from '@tanstack/react-query';
import { runsResponse, type RunSummary } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { compareKeys } from './keys';

/**
 * The team's runs, for choosing what to compare. The runs feature has its own list; features do not share code, and
 * this one needs only the summaries.
 */
export function listCandidateRuns(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunSummary[]> {
  return apiRequest(`/teams/${teamId}/runs`, { signal, schema: runsResponse }).then((r) => r.runs);
}

export const candidateRunsQueryOptions = (teamId: number) =>
  queryOptions({ queryKey: compareKeys.candidates(teamId), queryFn: ({ signal }) => listCandidateRuns(teamId, { signal }) });

export function useCandidateRuns(teamId: number) {
  return useQuery(candidateRunsQueryOptions(teamId));
}
