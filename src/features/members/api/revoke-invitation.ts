import { useMutation, useQueryClient } from '@tanstack/react-query';
import { apiRequest } from '../../../lib/api-client';
import { memberKeys } from './keys';

export function revokeInvitation(teamId: number, invitationId: number): Promise<undefined> {
  return apiRequest(`/teams/${teamId}/invitations/${invitationId}`, { method: 'DELETE' });
}

export function useRevokeInvitation(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (invitationId: number) => revokeInvitation(teamId, invitationId),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: memberKeys.invitations(teamId) }),
  });
}
