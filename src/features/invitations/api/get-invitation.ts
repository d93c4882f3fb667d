import { queryOptions, useQuery } from '@tanstack/react-query';
import { invitationPreview, type InvitationPreview } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { invitationKeys } from './keys';

export function getInvitation(token: string, { signal }: { signal?: AbortSignal } = {}): Promise<InvitationPreview> {
  return apiRequest(`/invitations/${encodeURIComponent(token)}`, { signal, schema: invitationPreview });
}

export const invitationQueryOptions = (token: string) =>
  queryOptions({
    queryKey: invitationKeys.preview(token),
    queryFn: ({ signal }) => getInvitation(token, { signal }),
    meta: { redirectOnUnauthenticated: false },
    // The token is single-use: once accepted the preview is gone, so never refetch it behind the form's back.
    staleTime: Infinity,
    refetchOnWindowFocus: false,
  });

export function useInvitation(token: string) {
  return useQuery(invitationQueryOptions(token));
}
