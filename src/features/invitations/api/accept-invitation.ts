import { useMutation, useQueryClient } from '@tanstack/react-query';
import { acceptInvitationResponse, type AcceptInvitationBody, type AcceptInvitationResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

export type { AcceptInvitationBody };

/** An existing account sends an empty body with its session; a new one sends name + password and is signed in. */
export function acceptInvitation(token: string, body: AcceptInvitationBody): Promise<AcceptInvitationResponse> {
  return apiRequest(`/invitations/${encodeURIComponent(token)}/accept`, { method: 'POST', body, schema: acceptInvitationResponse });
}

export function useAcceptInvitation(token: string) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: AcceptInvitationBody) => acceptInvitation(token, body),
    meta: { redirectOnUnauthenticated: false },
    // The account has a new team (or a new account is signed in): cached answers are out of date.
    onSuccess: () => queryClient.removeQueries(),
  });
}
