import { useMutation, useQueryClient } from '@tanstack/react-query';
import { apiRequest } from '../../../lib/api-client';
import { memberKeys } from './keys';

export function removeMember(teamId: number, userId: number): Promise<undefined> {
  return apiRequest(`/teams/${teamId}/members/${userId}`, { method: 'DELETE' });
}

export function useRemoveMember(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (userId: number) => removeMember(teamId, userId),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: memberKeys.list(teamId) }),
  });
}
