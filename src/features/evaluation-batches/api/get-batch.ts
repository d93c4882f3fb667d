import { queryOptions, useQuery } from '@tanstack/react-query';
import { evaluationBatchResponse, terminalJobStates, type EvaluationBatch } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { batchKeys } from './keys';

/** How often a batch still queued or running is asked for again; polling stops at a terminal state. */
export const BATCH_REFRESH_MS = 1_000;

export function getBatch(teamId: number, jobId: number, { signal }: { signal?: AbortSignal } = {}): Promise<EvaluationBatch> {
  return apiRequest(`/teams/${teamId}/evaluation-batches/${jobId}`, { signal, schema: evaluationBatchResponse }).then((r) => r.batch);
}

export function batchMatrixCsvUrl(teamId: number, jobId: number): string {
  return `${env.apiBasePath}/teams/${teamId}/evaluation-batches/${jobId}/matrix?format=csv`;
}

export const batchQueryOptions = (teamId: number, jobId: number) =>
  queryOptions({
    queryKey: batchKeys.batch(teamId, jobId),
    queryFn: ({ signal }) => getBatch(teamId, jobId, { signal }),
    staleTime: 0,
    refetchInterval: (query) => (query.state.data && terminalJobStates.includes(query.state.data.job.state) ? false : BATCH_REFRESH_MS),
  });

export function useBatch(teamId: number, jobId: number) {
  return useQuery(batchQueryOptions(teamId, jobId));
}
