import { queryOptions, useQuery } from '@tanstack/react-query';
import { modelJobResponse, terminalJobStates, type ModelJobView } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** How often a model job that has not ended is asked for again. */
const POLL_MS = 500;

/** An anomaly or denoise job: state, progress and, once it has succeeded, its result. */
export function getModelJob(teamId: number, jobId: number, { signal }: { signal?: AbortSignal } = {}): Promise<ModelJobView> {
  return apiRequest(`/teams/${teamId}/model-jobs/${jobId}`, { signal, schema: modelJobResponse });
}

export const modelJobQueryOptions = (teamId: number, jobId: number) =>
  queryOptions({
    queryKey: codebookKeys.modelJob(teamId, jobId),
    queryFn: ({ signal }) => getModelJob(teamId, jobId, { signal }),
    // Followed until it ends; an ended job never changes.
    refetchInterval: (query) => (query.state.data && terminalJobStates.includes(query.state.data.job.state) ? false : POLL_MS),
    staleTime: (query) => (query.state.data && terminalJobStates.includes(query.state.data.job.state) ? Infinity : 0),
  });

export function useModelJobStatus(teamId: number, jobId: number | null) {
  return useQuery({ ...modelJobQueryOptions(teamId, jobId ?? 0), enabled: jobId !== null });
}
