import { queryOptions, useQuery } from '@tanstack/react-query';
import { meResponse, type MeResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { authKeys } from './keys';

export function getMe({ signal }: { signal?: AbortSignal } = {}): Promise<MeResponse> {
  return apiRequest('/me', { signal, schema: meResponse });
}

export const meQueryOptions = () =>
  queryOptions({
    queryKey: authKeys.me(),
    queryFn: ({ signal }) => getMe({ signal }),
  });

export function useMe() {
  return useQuery(meQueryOptions());
}
