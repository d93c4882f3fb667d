import { queryOptions, useQuery } from '@tanstack/react-query';
import { imagesResponse, type Image } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

export async function listImages(teamId: number, setId: number, { signal }: { signal?: AbortSignal } = {}): Promise<Image[]> {
  const answer = await apiRequest(`/teams/${teamId}/image-sets/${setId}/images`, { signal, schema: imagesResponse });
  return answer.images;
}

export const imagesQueryOptions = (teamId: number, setId: number) =>
  queryOptions({
    queryKey: imageSetKeys.images(teamId, setId),
    queryFn: ({ signal }) => listImages(teamId, setId, { signal }),
  });

export function useImages(teamId: number, setId: number) {
  return useQuery(imagesQueryOptions(teamId, setId));
}

/** The thumbnail's URL; the browser fetches it itself (with the session cookie) and caches it by ETag. */
export function thumbnailUrl(teamId: number, imageId: number): string {
  return `${env.apiBasePath}/teams/${teamId}/images/${imageId}/thumbnail`;
}
