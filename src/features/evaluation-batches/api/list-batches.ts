import { queryOptions, useQuery } from '@tanstack/react-query';
import { evaluationBatchesResponse, type EvaluationBatchList } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { batchKeys } from './keys';

export function listBatches(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<EvaluationBatchList['batches']> {
  return apiRequest(`/teams/${teamId}/evaluation-batches`, { signal, schema: evaluationBatchesResponse }).then((r) => r.batches);
}

export const batchesQueryOptions = (teamId: number) => queryOptions({ queryKey: batchKeys.list(teamId), queryFn: ({ signal }) => listBatches(teamId, { signal }) });

export function useBatches(teamId: number) {
  return useQuery(batchesQueryOptions(teamId));
}
