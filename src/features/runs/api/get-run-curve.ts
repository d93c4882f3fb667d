import { queryOptions, useQuery } from '@tanstack/react-query';
import { runCurveResponse, type RunCurve } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { runKeys } from './keys';

export function getRunCurve(teamId: number, runId: number, { signal }: { signal?: AbortSignal } = {}): Promise<RunCurve> {
  return apiRequest(`/teams/${teamId}/runs/${runId}/curve`, { signal, schema: runCurveResponse });
}

/** The same curve as a CSV attachment, for a plain download link. */
export function runCurveCsvUrl(teamId: number, runId: number): string {
  return `${env.apiBasePath}/teams/${teamId}/runs/${runId}/curve?format=csv`;
}

export const runCurveQueryOptions = (teamId: number, runId: number) =>
  queryOptions({
    queryKey: runKeys.curve(teamId, runId),
    queryFn: ({ signal }) => getRunCurve(teamId, runId, { signal }),
  });

export function useRunCurve(teamId: number, runId: number, { enabled = true }: { enabled?: boolean } = {}) {
  return useQuery({ ...runCurveQueryOptions(teamId, runId), enabled });
}
