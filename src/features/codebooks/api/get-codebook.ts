import { queryOptions, useQuery } from '@tanstack/react-query';
import { codebookResponse, type CodebookDetail, type ExportTarget } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

export function getCodebook(teamId: number, codebookId: number, { signal }: { signal?: AbortSignal } = {}): Promise<CodebookDetail> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}`, { signal, schema: codebookResponse }).then((r) => r.codebook);
}

export const codebookQueryOptions = (teamId: number, codebookId: number) =>
  queryOptions({
    queryKey: codebookKeys.detail(teamId, codebookId),
    queryFn: ({ signal }) => getCodebook(teamId, codebookId, { signal }),
    // A codebook is frozen under its id: its codewords and checksum never change.
    staleTime: Infinity,
  });

export function useCodebook(teamId: number, codebookId: number) {
  return useQuery(codebookQueryOptions(teamId, codebookId));
}

/**
 * The export document (or, with target npy, the codewords as a NumPy .npy file) as an attachment; a plain link keeps
 * the download in the browser's own machinery.
 */
export function codebookExportUrl(teamId: number, codebookId: number, target: ExportTarget = 'json'): string {
  const base = `${env.apiBasePath}/teams/${teamId}/codebooks/${codebookId}/export`;
  return target === 'json' ? base : `${base}?target=${target}`;
}
