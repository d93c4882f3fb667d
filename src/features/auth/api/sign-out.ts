import { useMutation, useQueryClient } from '@tanstack/react-query';
import { apiRequest } from '../../../lib/api-client';

export function signOut(): Promise<undefined> {
  return apiRequest('/auth/logout', { method: 'POST' });
}

export function useSignOut() {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: signOut,
    meta: { redirectOnUnauthenticated: false },
    // Drop every cached answer even if the request failed: the next person at this screen must not see them.
    onSettled: () => queryClient.removeQueries(),
  });
}
