import { queryOptions, useQuery } from '@tanstack/react-query';
import { imageSetsResponse, type ImageSet } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runSetupKeys } from './keys';

export async function listImageSets(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ImageSet[]> {
  const answer = await apiRequest(`/teams/${teamId}/image-sets`, { signal, schema: imageSetsResponse });
  return answer.imageSets;
}

export const imageSetsQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: runSetupKeys.imageSets(teamId),
    queryFn: ({ signal }) => listImageSets(teamId, { signal }),
    staleTime: 0,
  });

export function useImageSets(teamId: number) {
  return useQuery(imageSetsQueryOptions(teamId));
}
