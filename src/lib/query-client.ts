import { MutationCache, QueryCache, QueryClient } from '@tanstack/react-query';
import { isApiError } from './api-client';

declare module '@tanstack/react-query' {
  interface Register {
    queryMeta: AuthMeta;
    mutationMeta: AuthMeta;
  }
}

type AuthMeta = {
  /**
   * False where a 401 is an answer rather than an expired session (signing in with a wrong
   * password, public invitation and reset pages): those must not bounce to the sign-in page.
   */
  redirectOnUnauthenticated?: boolean;
};

/** A 4xx is final; a network failure or 5xx may be transient, so it gets exactly one more try. */
export function shouldRetry(failureCount: number, error: unknown): boolean {
  if (isApiError(error) && error.isClientError) return false;
  return failureCount < 1;
}

export type QueryClientHooks = {
  /** Called when any query or mutation learns that the session has ended. */
  onUnauthenticated?: () => void;
};

export function createQueryClient({ onUnauthenticated }: QueryClientHooks = {}): QueryClient {
  const handle = (error: unknown, meta: AuthMeta | undefined) => {
    if (isApiError(error) && error.isUnauthenticated && meta?.redirectOnUnauthenticated !== false) {
      onUnauthenticated?.();
    }
  };
  return new QueryClient({
    queryCache: new QueryCache({ onError: (error, query) => handle(error, query.meta) }),
    mutationCache: new MutationCache({ onError: (error, _vars, _ctx, mutation) => handle(error, mutation.meta) }),
    defaultOptions: {
      queries: {
        retry: shouldRetry,
        staleTime: 30_000,
      },
      // A mutation may already have taken effect when its answer is lost; never repeat it blindly.
      mutations: { retry: false },
    },
  });
}
