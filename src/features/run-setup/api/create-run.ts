import { useMutation, useQueryClient } from '@tanstack/react-query';
import { runResponse, type CreateRunBody, type RunDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { teamKeys } from '../../../lib/queries/keys';

export async function createRun(teamId: number, body: CreateRunBody): Promise<RunDetail> {
  const answer = await apiRequest(`/teams/${teamId}/runs`, { method: 'POST', body, schema: runResponse });
  return answer.run;
}

export function useCreateRun(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: CreateRunBody) => createRun(teamId, body),
    // A new run changes every runs list of every feature (runs page, team home, compare picker): one prefix reaches them all.
    onSuccess: () => queryClient.invalidateQueries({ queryKey: teamKeys.runs(teamId) }),
  });
}
