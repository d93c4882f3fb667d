import { useMutation } from '@tanstack/react-query';
import type { z } from 'zod';
import { evaluateCodebookResponse, type EvaluateCodebookBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

export type EvaluationJob = z.infer<typeof evaluateCodebookResponse>['job'];

/** Queues an evaluation job (202); its results appear on the codebook's page when the job is done. */
export async function evaluateCodebook(teamId: number, codebookId: number, body: EvaluateCodebookBody): Promise<EvaluationJob> {
  const answer = await apiRequest(`/teams/${teamId}/codebooks/${codebookId}/evaluate`, { method: 'POST', body, schema: evaluateCodebookResponse });
  return answer.job;
}

/** The codebook's evaluations belong to the codebooks feature; the page invalidates them through onQueued. */
export function useEvaluateCodebook(teamId: number, codebookId: number) {
  return useMutation({
    mutationFn: (body: EvaluateCodebookBody) => evaluateCodebook(teamId, codebookId, body),
  });
}
