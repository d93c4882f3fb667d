import { useMutation, useQueryClient } from '@tanstack/react-query';
import { runResponse, type RunDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

/** Engineers and admins; the name is checked by the contract's renameRunBody. */
export function renameRun(teamId: number, runId: number, name: string): Promise<RunDetail> {
  return apiRequest(`/teams/${teamId}/runs/${runId}`, { method: 'PATCH', body: { name }, schema: runResponse }).then((r) => r.run);
}

export function useRenameRun(teamId: number, runId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (name: string) => renameRun(teamId, runId, name),
    onSuccess: async (run) => {
      queryClient.setQueryData(runKeys.detail(teamId, runId), run);
      // Other features' lists that show run names are refreshed by the page (features cannot reach their keys).
      await queryClient.invalidateQueries({ queryKey: runKeys.list(teamId) });
    },
  });
}
