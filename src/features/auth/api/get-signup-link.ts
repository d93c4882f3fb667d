import { queryOptions, useQuery } from '@tanstack/react-query';
import { signupLinkPreview, type SignupLinkPreview } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { authKeys } from './keys';

export function getSignupLink(token: string, { signal }: { signal?: AbortSignal } = {}): Promise<SignupLinkPreview> {
  return apiRequest(`/auth/signup/${encodeURIComponent(token)}`, { signal, schema: signupLinkPreview });
}

export const signupLinkQueryOptions = (token: string) =>
  queryOptions({
    queryKey: authKeys.signupLink(token),
    queryFn: ({ signal }) => getSignupLink(token, { signal }),
    meta: { redirectOnUnauthenticated: false },
    // The link is single-use: once finished the preview is gone, so never refetch it behind the form's back.
    staleTime: Infinity,
    refetchOnWindowFocus: false,
  });

export function useSignupLink(token: string) {
  return useQuery(signupLinkQueryOptions(token));
}
