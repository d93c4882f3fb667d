import { queryOptions, useQuery } from '@tanstack/react-query';
import { releasesResponse, type ReleaseSummary } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { releaseKeys } from './keys';

export function listReleases(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ReleaseSummary[]> {
  return apiRequest(`/teams/${teamId}/releases`, { signal, schema: releasesResponse }).then((r) => r.releases);
}

export const releasesQueryOptions = (teamId: number) =>
  queryOptions({ queryKey: releaseKeys.list(teamId), queryFn: ({ signal }) => listReleases(teamId, { signal }) });

export function useReleases(teamId: number) {
  return useQuery(releasesQueryOptions(teamId));
}
