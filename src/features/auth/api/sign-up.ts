import { useMutation } from '@tanstack/react-query';
import { acceptedResponse, type SignupRequestBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

/** Always 202: the server mails a link to a new address, or a note to the owner of an existing one. */
export function requestSignUp(body: SignupRequestBody): Promise<unknown> {
  return apiRequest('/auth/signup', { method: 'POST', body, schema: acceptedResponse });
}

export function useRequestSignUp() {
  return useMutation({ mutationFn: requestSignUp, meta: { redirectOnUnauthenticated: false } });
}
