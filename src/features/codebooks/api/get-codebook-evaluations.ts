import { queryOptions, useQuery } from '@tanstack/react-query';
import { codebookEvaluationsResponse, type CodebookEvaluations } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

export function getCodebookEvaluations(teamId: number, codebookId: number, { signal }: { signal?: AbortSignal } = {}): Promise<CodebookEvaluations['evaluations']> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/evaluations`, { signal, schema: codebookEvaluationsResponse }).then((r) => r.evaluations);
}

export const codebookEvaluationsQueryOptions = (teamId: number, codebookId: number) =>
  queryOptions({
    queryKey: codebookKeys.evaluations(teamId, codebookId),
    queryFn: ({ signal }) => getCodebookEvaluations(teamId, codebookId, { signal }),
  });

export function useCodebookEvaluations(teamId: number, codebookId: number) {
  return useQuery(codebookEvaluationsQueryOptions(teamId, codebookId));
}
