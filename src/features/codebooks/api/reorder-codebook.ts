import { useMutation, useQueryClient } from '@tanstack/react-query';
import { reorderResponse, type ReorderResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** Index assignment at `ber`, saved as a new codebook of the team (201). */
export function reorderCodebook(teamId: number, codebookId: number, ber: number): Promise<ReorderResponse> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/reorder`, { method: 'POST', body: { ber }, schema: reorderResponse });
}

/** The new codebook joins the team's list, so the list is read again once it exists. */
export function useReorderCodebook(teamId: number, codebookId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (ber: number) => reorderCodebook(teamId, codebookId, ber),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: codebookKeys.list(teamId) }),
  });
}
