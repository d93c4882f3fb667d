import { queryOptions, useQuery } from '@tanstack/react-query';
import { imagesResponse, type Image } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookImportKeys } from './keys';

export async function listSetImages(teamId: number, setId: number, { signal }: { signal?: AbortSignal } = {}): Promise<Image[]> {
  const answer = await apiRequest(`/teams/${teamId}/image-sets/${setId}/images?role=held-out`, { signal, schema: imagesResponse });
  return answer.images;
}

/** Only the held-out images of a set: an imported codebook is measured on images marked for measuring. */
export const heldOutImagesQueryOptions = (teamId: number, setId: number) =>
  queryOptions({
    queryKey: [...codebookImportKeys.setImages(teamId, setId), 'held-out'] as const,
    queryFn: ({ signal }) => listSetImages(teamId, setId, { signal }),
    staleTime: 0,
  });

export function useHeldOutImages(teamId: number, setId: number | null) {
  return useQuery({ ...heldOutImagesQueryOptions(teamId, setId ?? 0), enabled: setId !== null });
}
