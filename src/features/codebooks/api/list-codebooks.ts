import { queryOptions, useQuery } from '@tanstack/react-query';
import { codebooksResponse, type CodebookSummary } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

export function listCodebooks(teamId: number, { signal }: { signal?: AbortSignal } = {}): Promise<CodebookSummary[]> {
  return apiRequest(`/teams/${teamId}/codebooks`, { signal, schema: codebooksResponse }).then((r) => r.codebooks);
}

export const codebooksQueryOptions = (teamId: number) =>
  queryOptions({ queryKey: codebookKeys.list(teamId), queryFn: ({ signal }) => listCodebooks(teamId, { signal }) });

export function useCodebooks(teamId: number) {
  return useQuery(codebooksQueryOptions(teamId));
}
