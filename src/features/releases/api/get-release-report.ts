import { queryOptions, useQuery } from '@tanstack/react-query';
import { releaseReportResponse, type ReleaseReport } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { releaseKeys } from './keys';

export function getReleaseReport(teamId: number, releaseId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ReleaseReport> {
  return apiRequest(`/teams/${teamId}/releases/${releaseId}/report`, { signal, schema: releaseReportResponse });
}

export const releaseReportQueryOptions = (teamId: number, releaseId: number) =>
  queryOptions({
    queryKey: releaseKeys.report(teamId, releaseId),
    queryFn: ({ signal }) => getReleaseReport(teamId, releaseId, { signal }),
    // A release is frozen: its report never changes.
    staleTime: Infinity,
  });

export function useReleaseReport(teamId: number, releaseId: number) {
  return useQuery(releaseReportQueryOptions(teamId, releaseId));
}
