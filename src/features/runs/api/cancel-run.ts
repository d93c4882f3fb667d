import { useMutation, useQueryClient } from '@tanstack/react-query';
import { runResponse, type RunDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

export function cancelRun(teamId: number, runId: number): Promise<RunDetail> {
  return apiRequest(`/teams/${teamId}/runs/${runId}/cancel`, { method: 'POST', schema: runResponse }).then((r) => r.run);
}

export function useCancelRun(teamId: number, runId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: () => cancelRun(teamId, runId),
    onSuccess: async (run) => {
      queryClient.setQueryData(runKeys.detail(teamId, runId), run);
      await Promise.all([
        queryClient.invalidateQueries({ queryKey: runKeys.run(teamId, runId) }),
        queryClient.invalidateQueries({ queryKey: runKeys.list(teamId) }),
      ]);
    },
  });
}
