import { queryOptions, useQuery } from '@tanstack/react-query';
import { reconstructionInfo, type ReconstructionInfo, type ReconstructionViewName } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** Figures of one held-out image coded with the codebook, including the container's real size in bytes. */
export function getReconstructionInfo(teamId: number, codebookId: number, imageId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ReconstructionInfo> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/reconstruction/${imageId}?view=info`, { signal, schema: reconstructionInfo });
}

export const reconstructionInfoQueryOptions = (teamId: number, codebookId: number, imageId: number) =>
  queryOptions({
    queryKey: codebookKeys.reconstructionInfo(teamId, codebookId, imageId),
    queryFn: ({ signal }) => getReconstructionInfo(teamId, codebookId, imageId, { signal }),
    staleTime: Infinity,
  });

export function useReconstructionInfo(teamId: number, codebookId: number, imageId: number | null) {
  return useQuery({ ...reconstructionInfoQueryOptions(teamId, codebookId, imageId ?? 0), enabled: imageId !== null });
}

/** PNG of one view, for an <img>; the browser's HTTP cache keeps it (the server marks it private, one hour). */
export function reconstructionImageUrl(teamId: number, codebookId: number, imageId: number, view: Exclude<ReconstructionViewName, 'info'>): string {
  return `${env.apiBasePath}/teams/${teamId}/codebooks/${codebookId}/reconstruction/${imageId}?view=${view}`;
}

/** The image's coding as a NumPy .npy download: its index map, or a mean-removed codebook's block mean codes. */
export function indexMapUrl(teamId: number, codebookId: number, imageId: number, plane: 'indices' | 'means' = 'indices'): string {
  const base = `${env.apiBasePath}/teams/${teamId}/codebooks/${codebookId}/index-map/${imageId}`;
  return plane === 'indices' ? base : `${base}?plane=${plane}`;
}
