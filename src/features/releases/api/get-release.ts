import { queryOptions, useQuery } from '@tanstack/react-query';
import { releaseResponse, type ReleaseDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { releaseKeys } from './keys';

export function getRelease(teamId: number, releaseId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ReleaseDetail> {
  return apiRequest(`/teams/${teamId}/releases/${releaseId}`, { signal, schema: releaseResponse }).then((r) => r.release);
}

export const releaseQueryOptions = (teamId: number, releaseId: number) =>
  queryOptions({ queryKey: releaseKeys.detail(teamId, releaseId), queryFn: ({ signal }) => getRelease(teamId, releaseId, { signal }) });

export function useRelease(teamId: number, releaseId: number) {
  return useQuery(releaseQueryOptions(teamId, releaseId));
}
