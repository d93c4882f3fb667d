import { useMutation } from '@tanstack/react-query';
import type { z } from 'zod';
import type { passwordResetRequestBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

export type PasswordResetRequest = z.infer<typeof passwordResetRequestBody>;

/** Always 202: the server never says whether an address has an account. */
export function requestPasswordReset(body: PasswordResetRequest): Promise<undefined> {
  return apiRequest('/auth/password-reset', { method: 'POST', body });
}

export function useRequestPasswordReset() {
  return useMutation({ mutationFn: requestPasswordReset, meta: { redirectOnUnauthenticated: false } });
}
