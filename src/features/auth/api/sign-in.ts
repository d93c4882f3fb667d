import { useMutation, useQueryClient } from '@tanstack/react-query';
import { loginResponse, type LoginBody, type LoginResponse } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

export function signIn(body: LoginBody): Promise<LoginResponse> {
  return apiRequest('/auth/login', { method: 'POST', body, schema: loginResponse });
}

export function useSignIn() {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: signIn,
    // 401 here means "wrong e-mail or password", an answer to show, not an expired session.
    meta: { redirectOnUnauthenticated: false },
    // Whatever was cached belonged to the previous session.
    onSuccess: () => queryClient.removeQueries(),
  });
}
