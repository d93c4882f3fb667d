import { useQueries } from '@tanstack/react-query';
import type { Image, ImageSet } from '../../../../server/contracts';
import { setImagesQueryOptions } from '../../../lib/queries/image-sets';
import type { ImageCatalog } from '../run-plan';

/** Every set's images at once, as the catalog the form plans with (image sizes give the vector estimate). */
export function useImageCatalog(teamId: number, sets: readonly ImageSet[]) {
  return useQueries({
    // Refetched on mount (staleTime 0): the form counts the images as they are now.
    queries: sets.map((set) => ({ ...setImagesQueryOptions(teamId, set.id), staleTime: 0 })),
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
