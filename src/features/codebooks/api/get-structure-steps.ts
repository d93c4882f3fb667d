import { queryOptions, useQuery } from '@tanstack/react-query';
import { structureStepsResponse, type StructureStepsInfo } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** One image through a tree's levels or a residual codebook's stages: index bits, MSE and PSNR at every step. */
export function getStructureSteps(teamId: number, codebookId: number, imageId: number, { signal }: { signal?: AbortSignal } = {}): Promise<StructureStepsInfo> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/reconstruction/${imageId}/steps`, { signal, schema: structureStepsResponse });
}

export const structureStepsQueryOptions = (teamId: number, codebookId: number, imageId: number) =>
  queryOptions({
    queryKey: codebookKeys.structureSteps(teamId, codebookId, imageId),
    queryFn: ({ signal }) => getStructureSteps(teamId, codebookId, imageId, { signal }),
    staleTime: Infinity,
  });

export function useStructureSteps(teamId: number, codebookId: number, imageId: number | null) {
  return useQuery({ ...structureStepsQueryOptions(teamId, codebookId, imageId ?? 0), enabled: imageId !== null });
}

/** PNG of one step's reconstruction, for an <img>; the browser's HTTP cache keeps it (private, one hour). */
export function structureStepImageUrl(teamId: number, codebookId: number, imageId: number, step: number): string {
  return `${env.apiBasePath}/teams/${teamId}/codebooks/${codebookId}/reconstruction/${imageId}/steps?step=${step}`;
}
