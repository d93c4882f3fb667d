import { queryOptions, useQuery } from '@tanstack/react-query';
import { runMetricsResponse, type RunMetrics } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

export function getRunMetrics(teamId: number, runId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunMetrics> {
  return apiRequest(`/teams/${teamId}/runs/${runId}/metrics`, { signal, schema: runMetricsResponse });
}

export function runMetricsCsvUrl(teamId: number, runId: number): string {
  return `${env.apiBasePath}/teams/${teamId}/runs/${runId}/metrics?format=csv`;
}

export const runMetricsQueryOptions = (teamId: number, runId: number) =>
  queryOptions({
    queryKey: runKeys.metrics(teamId, runId),
    queryFn: ({ signal }) => getRunMetrics(teamId, runId, { signal }),
  });

export function useRunMetrics(teamId: number, runId: number, { enabled = true }: { enabled?: boolean } = {}) {
  return useQuery({ ...runMetricsQueryOptions(teamId, runId), enabled });
}
