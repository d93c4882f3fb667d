import { useMutation, useQueryClient } from '@tanstack/react-query';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

/** Admin only; 409 while one of the run's jobs is running (cancel it first). */
export function deleteRun(teamId: number, runId: number): Promise<undefined> {
  return apiRequest(`/teams/${teamId}/runs/${runId}`, { method: 'DELETE' });
}

export function useDeleteRun(teamId: number, runId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: () => deleteRun(teamId, runId),
    onSuccess: async () => {
      // The deleted run's own entries would only answer 404 now; drop them rather than refetch.
      queryClient.removeQueries({ queryKey: runKeys.run(teamId, runId) });
      // Its codebooks went with it and the compare page may offer it: the page refreshes those features' keys.
      await queryClient.invalidateQueries({ queryKey: runKeys.list(teamId) });
    },
  });
}
