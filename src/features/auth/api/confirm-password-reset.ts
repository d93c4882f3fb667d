import { useMutation } from '@tanstack/react-query';
import type { z } from 'zod';
import type { passwordResetConfirmBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

export type PasswordResetConfirm = z.infer<typeof passwordResetConfirmBody>;

export function confirmPasswordReset(body: PasswordResetConfirm): Promise<undefined> {
  return apiRequest('/auth/password-reset/confirm', { method: 'POST', body });
}

export function useConfirmPasswordReset() {
  return useMutation({ mutationFn: confirmPasswordReset, meta: { redirectOnUnauthenticated: false } });
}
