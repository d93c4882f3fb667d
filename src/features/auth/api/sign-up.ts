import { useMutation, useQueryClient } from '@tanstack/react-query';
import { signupResponse, type SignupBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import type { z } from 'zod';

export type SignupResult = z.infer<typeof signupResponse>;

export function signUp(body: SignupBody): Promise<SignupResult> {
  return apiRequest('/auth/signup', { method: 'POST', body, schema: signupResponse });
}

export function useSignUp() {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: signUp,
    meta: { redirectOnUnauthenticated: false },
    onSuccess: () => queryClient.removeQueries(),
  });
}
