import { useMutation, useQueryClient } from '@tanstack/react-query';
import type { z } from 'zod';
import { loginResponse, type acceptInvitationBody, type LoginResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

export type AcceptInvitationBody = z.infer<typeof acceptInvitationBody>;

export function acceptInvitation(token: string, body: AcceptInvitationBody): Promise<LoginResponse> {
  return apiRequest(`/invitations/${encodeURIComponent(token)}/accept`, { method: 'POST', body, schema: loginResponse });
}

export function useAcceptInvitation(token: string) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: AcceptInvitationBody) => acceptInvitation(token, body),
    meta: { redirectOnUnauthenticated: false },
    // Accepting signs the invitee in, possibly as someone other than whoever used this browser before.
    onSuccess: () => queryClient.removeQueries(),
  });
}
