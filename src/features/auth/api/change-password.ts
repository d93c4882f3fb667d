import { useMutation } from '@tanstack/react-query';
import type { ChangePasswordBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

/** 204; every other session of the account ends, this one stays. */
export function changePassword(body: ChangePasswordBody): Promise<undefined> {
  return apiRequest('/me/password', { method: 'POST', body });
}

export function useChangePassword() {
  return useMutation({ mutationFn: changePassword });
}
