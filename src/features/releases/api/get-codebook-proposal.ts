import { queryOptions, useQuery } from '@tanstack/react-query';
import { codebookProposalResponse, type ReleaseDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { releaseKeys } from './keys';

/** The codebook's review and release, or null when it was never proposed. */
export function getCodebookProposal(teamId: number, codebookId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ReleaseDetail | null> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/proposal`, { signal, schema: codebookProposalResponse }).then((r) => r.release);
}

export const codebookProposalQueryOptions = (teamId: number, codebookId: number) =>
  queryOptions({ queryKey: releaseKeys.ofCodebook(teamId, codebookId), queryFn: ({ signal }) => getCodebookProposal(teamId, codebookId, { signal }) });

export function useCodebookProposal(teamId: number, codebookId: number) {
  return useQuery(codebookProposalQueryOptions(teamId, codebookId));
}
