import { queryOptions, useQuery } from '@tanstack/react-query';
import type { z } from 'zod';
import { outboxResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { outboxKeys } from './keys';

export type OutboxResponse = z.infer<typeof outboxResponse>;

export function listOutbox(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<OutboxResponse> {
  return apiRequest(`/teams/${teamId}/outbox`, { signal, schema: outboxResponse });
}

export const outboxQueryOptions = (teamId: number) =>
  queryOptions({
    queryKey: outboxKeys.list(teamId),
    queryFn: ({ signal }) => listOutbox(teamId, { signal }),
    // Delivery status changes after the page loads (mail leaves after its transaction commits); keep the list current.
    staleTime: 5_000,
  });

export function useOutbox(teamId: number) {
  return useQuery(outboxQueryOptions(teamId));
}
