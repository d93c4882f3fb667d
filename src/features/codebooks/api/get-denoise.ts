import { queryOptions, useQuery } from '@tanstack/react-query';
import { denoiseResponse, type DenoiseResult } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** Seeded noise of `sigma` added to one image and removed by the nearest codeword and by the posterior mean. */
export function getDenoise(teamId: number, codebookId: number, imageId: number, sigma: number, seed: number, step: number, { signal }: { signal?: AbortSignal } = {}): Promise<DenoiseResult> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/denoise/${imageId}?sigma=${sigma}&seed=${seed}&step=${step}`, { signal, schema: denoiseResponse });
}

export const denoiseQueryOptions = (teamId: number, codebookId: number, imageId: number, sigma: number, seed: number, step: number) =>
  queryOptions({
    queryKey: codebookKeys.denoise(teamId, codebookId, imageId, sigma, seed, step),
    queryFn: ({ signal }) => getDenoise(teamId, codebookId, imageId, sigma, seed, step, { signal }),
    // Deterministic for its seed: the same request always answers the same images.
    staleTime: Infinity,
  });

export function useDenoise(teamId: number, codebookId: number, imageId: number | null, sigma: number, seed: number, step: number) {
  return useQuery({ ...denoiseQueryOptions(teamId, codebookId, imageId ?? 0, sigma, seed, step), enabled: imageId !== null });
}
