import { useMutation, useQueryClient } from '@tanstack/react-query';
import type { z } from 'zod';
import { signupResponse, type SignupCompleteBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

export type SignupResult = z.infer<typeof signupResponse>;

export function finishSignUp(body: SignupCompleteBody): Promise<SignupResult> {
  return apiRequest('/auth/signup/complete', { method: 'POST', body, schema: signupResponse });
}

export function useFinishSignUp() {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: finishSignUp,
    meta: { redirectOnUnauthenticated: false },
    // The new account is signed in: whatever was cached belonged to someone else.
    onSuccess: () => queryClient.removeQueries(),
  });
}
