import { queryOptions, useQuery } from '@tanstack/react-query';
import type { z } from 'zod';
import { invitationsResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { memberKeys } from './keys';

export type InvitationsResponse = z.infer<typeof invitationsResponse>;

export function listInvitations(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<InvitationsResponse> {
  return apiRequest(`/teams/${teamId}/invitations`, { signal, schema: invitationsResponse });
}

/** Admin only; callers enable it for admins, since the server answers 403 to everyone else. */
export const invitationsQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: memberKeys.invitations(teamId),
    queryFn: ({ signal }) => listInvitations(teamId, { signal }),
  });

export function useInvitations(teamId: number, { enabled = true }: { enabled?: boolean } = {}) {
  return useQuery({ ...invitationsQueryOptions(teamId), enabled });
}
