import { queryOptions, useQuery } from '@tanstack/react-query';
import { imageSetsResponse, imagesResponse, type Image, type ImageSet } from '../../../server/contracts';
import { apiRequest } from '../api-client';
import { teamKeys, type SetImagesRole } from './keys';

/** GET /teams/:teamId/image-sets, read by the image-set pages, the team home, the run form and codebook import. */
export function listImageSets(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ImageSet[]> {
  return apiRequest(`/teams/${teamId}/image-sets`, { signal, schema: imageSetsResponse }).then((r) => r.imageSets);
}

export const imageSetsQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: teamKeys.imageSetList(teamId),
    queryFn: ({ signal }) => listImageSets(teamId, { signal }),
  });

/** `fresh` refetches on mount (the forms count the images as they are now, not as a page saw them). */
export function useImageSets(teamId: number, { enabled = true, fresh = false }: { enabled?: boolean; fresh?: boolean } = {}) {
  return useQuery({ ...imageSetsQueryOptions(teamId), enabled, ...(fresh ? { staleTime: 0 } : {}) });
}

/** GET /teams/:teamId/image-sets/:setId/images[?role=…]. */
export function listSetImages(teamId: number, setId: number, role: SetImagesRole = 'all', { signal }: { signal?: AbortSignal } = {}): Promise<Image[]> {
  const query = role === 'all' ? '' : `?role=${role}`;
  return apiRequest(`/teams/${teamId}/image-sets/${setId}/images${query}`, { signal, schema: imagesResponse }).then((r) => r.images);
}

export const setImagesQueryOptions = (teamId: number, setId: number, role: SetImagesRole = 'all') =>
  queryOptions({
    queryKey: teamKeys.setImages(teamId, setId, role),
    queryFn: ({ signal }) => listSetImages(teamId, setId, role, { signal }),
  });

export function useSetImages(teamId: number, setId: number | null, { role = 'all', fresh = false }: { role?: SetImagesRole; fresh?: boolean } = {}) {
  return useQuery({ ...setImagesQueryOptions(teamId, setId ?? 0, role), enabled: setId !== null, ...(fresh ? { staleTime: 0 } : {}) });
}
