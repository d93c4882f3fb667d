import { queryOptions, useQuery } from '@tanstack/react-query';
import { imageSetResponse, type ImageSet } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

export async function getImageSet(teamId: number, setId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ImageSet> {
  const answer = await apiRequest(`/teams/${teamId}/image-sets/${setId}`, { signal, schema: imageSetResponse });
  return answer.imageSet;
}

export const imageSetQueryOptions = (teamId: number, setId: number) =>
  queryOptions({
    queryKey: imageSetKeys.detail(teamId, setId),
    queryFn: ({ signal }) => getImageSet(teamId, setId, { signal }),
  });

export function useImageSet(teamId: number, setId: number) {
  return useQuery(imageSetQueryOptions(teamId, setId));
}
