import { queryOptions, useQuery } from '@tanstack/react-query';
import { anomalyListResponse, anomalyMapResponse, type AnomalyList, type AnomalyMap } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** Every coding block's scores for one image, flagged at the false-alarm `rate` measured on the training patches. */
export function getAnomalyMap(teamId: number, codebookId: number, imageId: number, rate: number, { signal }: { signal?: AbortSignal } = {}): Promise<AnomalyMap> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/anomaly/${imageId}?rate=${rate}`, { signal, schema: anomalyMapResponse });
}

export const anomalyMapQueryOptions = (teamId: number, codebookId: number, imageId: number, rate: number) =>
  queryOptions({
    queryKey: codebookKeys.anomalyMap(teamId, codebookId, imageId, rate),
    queryFn: ({ signal }) => getAnomalyMap(teamId, codebookId, imageId, rate, { signal }),
    // A codebook and its images never change under their ids.
    staleTime: Infinity,
  });

export function useAnomalyMap(teamId: number, codebookId: number, imageId: number | null, rate: number) {
  return useQuery({ ...anomalyMapQueryOptions(teamId, codebookId, imageId ?? 0, rate), enabled: imageId !== null });
}

/** The most unusual blocks over the codebook's run's held-out images, highest score first. */
export function getAnomalyList(teamId: number, codebookId: number, rate: number, limit: number, { signal }: { signal?: AbortSignal } = {}): Promise<AnomalyList> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/anomalies?rate=${rate}&limit=${limit}`, { signal, schema: anomalyListResponse });
}

export const anomalyListQueryOptions = (teamId: number, codebookId: number, rate: number, limit: number) =>
  queryOptions({
    queryKey: codebookKeys.anomalyList(teamId, codebookId, rate, limit),
    queryFn: ({ signal }) => getAnomalyList(teamId, codebookId, rate, limit, { signal }),
    staleTime: Infinity,
  });

export function useAnomalyList(teamId: number, codebookId: number, rate: number, limit: number, enabled: boolean) {
  return useQuery({ ...anomalyListQueryOptions(teamId, codebookId, rate, limit), enabled });
}
