import { queryOptions, useQueries } from '@tanstack/react-query';
import { imagesResponse, type Image, type ImageSet } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import type { ImageCatalog } from '../run-plan';
import { runSetupKeys } from './keys';

export async function listSetImages(teamId: number, setId: number, { signal }: { signal?: AbortSignal } = {}): Promise<Image[]> {
  const answer = await apiRequest(`/teams/${teamId}/image-sets/${setId}/images`, { signal, schema: imagesResponse });
  return answer.images;
}

export const setImagesQueryOptions = (teamId: number, setId: number) =>
  queryOptions({
    queryKey: runSetupKeys.setImages(teamId, setId),
    queryFn: ({ signal }) => listSetImages(teamId, setId, { signal }),
    staleTime: 0,
  });

/** Every set's images at once, as the catalog the form plans with (image sizes give the vector estimate). */
export function useImageCatalog(teamId: number, sets: readonly ImageSet[]) {
  return useQueries({
    queries: sets.map((set) => setImagesQueryOptions(teamId, set.id)),
    combine: (results) => {
      const catalog = new Map<number, Image[]>();
      results.forEach((result, index) => {
        if (result.data) catalog.set(sets[index].id, result.data);
      });
      return {
        catalog: catalog as ImageCatalog,
        isPending: results.some((result) => result.isPending),
        error: results.find((result) => result.isError)?.error ?? null,
        refetch: () => Promise.all(results.map((result) => result.refetch())),
      };
    },
  });
}
