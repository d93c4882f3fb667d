import { queryOptions, useQuery } from '@tanstack/react-query';
import { codebookStructureResponse, type CodebookStructureView } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** Which rows of the codebook's table are which tree level or residual stage (a flat codebook: its kind alone). */
export function getCodebookStructure(teamId: number, codebookId: number, { signal }: { signal?: AbortSignal } = {}): Promise<CodebookStructureView> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/structure`, { signal, schema: codebookStructureResponse });
}

export const codebookStructureQueryOptions = (teamId: number, codebookId: number) =>
  queryOptions({
    queryKey: codebookKeys.structure(teamId, codebookId),
    queryFn: ({ signal }) => getCodebookStructure(teamId, codebookId, { signal }),
    // A stored codebook never changes under its id.
    staleTime: Infinity,
  });

export function useCodebookStructure(teamId: number, codebookId: number, enabled = true) {
  return useQuery({ ...codebookStructureQueryOptions(teamId, codebookId), enabled });
}
