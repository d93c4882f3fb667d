import { queryOptions, useQuery } from '@tanstack/react-query';
import type { z } from 'zod';
import { membersResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { memberKeys } from './keys';

export type MembersResponse = z.infer<typeof membersResponse>;

export function listMembers(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<MembersResponse> {
  return apiRequest(`/teams/${teamId}/members`, { signal, schema: membersResponse });
}

export const membersQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: memberKeys.list(teamId),
    queryFn: ({ signal }) => listMembers(teamId, { signal }),
  });

export function useMembers(teamId: number) {
  return useQuery(membersQueryOptions(teamId));
}
