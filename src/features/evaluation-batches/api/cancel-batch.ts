import { useMutation, useQueryClient } from '@tanstack/react-query';
import { evaluationBatchResponse, type EvaluationBatch } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { batchKeys } from './keys';

export function cancelBatch(teamId: number, jobId: number): Promise<EvaluationBatch> {
  return apiRequest(`/teams/${teamId}/evaluation-batches/${jobId}/cancel`, { method: 'POST', schema: evaluationBatchResponse }).then((r) => r.batch);
}

export function useCancelBatch(teamId: number, jobId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: () => cancelBatch(teamId, jobId),
    onSuccess: async (batch) => {
      queryClient.setQueryData(batchKeys.batch(teamId, jobId), batch);
      await queryClient.invalidateQueries({ queryKey: batchKeys.team(teamId) });
    },
  });
}
