import { useMutation, useQueryClient } from '@tanstack/react-query';
import { releaseResponse, type ProposeReleaseBody, type ReleaseDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { releaseKeys } from './keys';

/** Engineers and admins; the body is checked by the contract's proposeReleaseBody (name slug, version, note). */
export function proposeRelease(teamId: number, codebookId: number, body: ProposeReleaseBody): Promise<ReleaseDetail> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/proposal`, { method: 'POST', body, schema: releaseResponse }).then((r) => r.release);
}

export type ReviewDecision = { decision: 'approve'; comment?: string } | { decision: 'return'; comment: string };

/** Another engineer or an admin than the proposer (the server answers 403 to the proposer). */
export function reviewRelease(teamId: number, releaseId: number, review: ReviewDecision): Promise<ReleaseDetail> {
  const body = review.comment ? { comment: review.comment } : {};
  return apiRequest(`/teams/${teamId}/releases/${releaseId}/${review.decision}`, { method: 'POST', body, schema: releaseResponse }).then((r) => r.release);
}

export function useProposeRelease(teamId: number, codebookId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: ProposeReleaseBody) => proposeRelease(teamId, codebookId, body),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: releaseKeys.all(teamId) }),
  });
}

export function useReviewRelease(teamId: number, releaseId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (review: ReviewDecision) => reviewRelease(teamId, releaseId, review),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: releaseKeys.all(teamId) }),
  });
}
