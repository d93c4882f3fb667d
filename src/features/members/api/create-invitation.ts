import { useMutation, useQueryClient } from '@tanstack/react-query';
import { z } from 'zod';
import { invitation, type Invitation, type Role } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { memberKeys } from './keys';

const createInvitationResponse = z.object({ invitation });

export async function createInvitation(teamId: number, body: { email: string; role: Role }): Promise<Invitation> {
  const answer = await apiRequest(`/teams/${teamId}/invitations`, { method: 'POST', body, schema: createInvitationResponse });
  return answer.invitation;
}

export function useCreateInvitation(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: { email: string; role: Role }) => createInvitation(teamId, body),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: memberKeys.invitations(teamId) }),
  });
}
