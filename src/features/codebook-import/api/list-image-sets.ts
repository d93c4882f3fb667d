import { queryOptions, useQuery } from '@tanstack/react-query';
import { imageSetsResponse, type ImageSet } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookImportKeys } from './keys';

export async function listImageSets(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ImageSet[]> {
  const answer = await apiRequest(`/teams/${teamId}/image-sets`, { signal, schema: imageSetsResponse });
  return answer.imageSets;
}

/** The sets an imported codebook can be measured on; refetched on mount so new uploads show up. */
export const imageSetsQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: codebookImportKeys.imageSets(teamId),
    queryFn: ({ signal }) => listImageSets(teamId, { signal }),
    staleTime: 0,
  });

export function useImageSets(teamId: number, { enabled = true }: { enabled?: boolean } = {}) {
  return useQuery({ ...imageSetsQueryOptions(teamId), enabled });
}
