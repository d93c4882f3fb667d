import { useMutation, useQueryClient } from '@tanstack/react-query';
import { evaluationBatchResponse, type CreateEvaluationBatchBody, type EvaluationBatch } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { batchKeys } from './keys';

export function createBatch(teamId: number, body: CreateEvaluationBatchBody): Promise<EvaluationBatch> {
  return apiRequest(`/teams/${teamId}/evaluation-batches`, { method: 'POST', body, schema: evaluationBatchResponse }).then((r) => r.batch);
}

export function useCreateBatch(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: CreateEvaluationBatchBody) => createBatch(teamId, body),
    onSuccess: async (batch) => {
      queryClient.setQueryData(batchKeys.batch(teamId, batch.job.id), batch);
      await queryClient.invalidateQueries({ queryKey: batchKeys.list(teamId) });
    },
  });
}
