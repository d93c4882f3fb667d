import { queryOptions, useQuery } from '@tanstack/react-query';
import { codebookResponse, type CodebookDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

/**
 * The recorded Lloyd trace of one of the run's codebooks. The codebook endpoint also sends codewords; only the trace
 * is kept in this cache entry, so the run page does not hold a second copy of a large codebook.
 */
export function getCodebookTrace(teamId: number, codebookId: number, { signal }: { signal?: AbortSignal } = {}): Promise<CodebookDetail['trace']> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}`, { signal, schema: codebookResponse }).then((r) => r.codebook.trace);
}

export const codebookTraceQueryOptions = (teamId: number, codebookId: number) =>
  queryOptions({
    queryKey: runKeys.trace(teamId, codebookId),
    queryFn: ({ signal }) => getCodebookTrace(teamId, codebookId, { signal }),
    // A codebook never changes under its id.
    staleTime: Infinity,
  });

export function useCodebookTrace(teamId: number, codebookId: number | null) {
  return useQuery({ ...codebookTraceQueryOptions(teamId, codebookId ?? 0), enabled: codebookId !== null });
}
