import { queryOptions, useQuery, keepPreviousData } from '@tanstack/react-query';
import { compareResponse, COMPARE_MAX_RUNS, COMPARE_MIN_RUNS, type CompareRate, type CompareResult } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { compareKeys } from './keys';

export function getComparison(teamId: number, runIds: readonly number[], rate: CompareRate, { signal }: { signal?: AbortSignal } = {}): Promise<CompareResult> {
  const query = new URLSearchParams({ runs: runIds.join(','), rate });
  return apiRequest(`/teams/${teamId}/compare?${query.toString().replace(/%2C/g, ',')}`, { signal, schema: compareResponse });
}

export function isComparable(runIds: readonly number[]): boolean {
  return runIds.length >= COMPARE_MIN_RUNS && runIds.length <= COMPARE_MAX_RUNS && new Set(runIds).size === runIds.length;
}

export const comparisonQueryOptions = (teamId: number, runIds: readonly number[], rate: CompareRate) =>
  queryOptions({
    queryKey: compareKeys.result(teamId, runIds, rate),
    queryFn: ({ signal }) => getComparison(teamId, runIds, rate, { signal }),
  });

/** Keeps the previous result on screen while a changed selection loads, so the chart does not blink away. */
export function useComparison(teamId: number, runIds: readonly number[], rate: CompareRate) {
  return useQuery({ ...comparisonQueryOptions(teamId, runIds, rate), enabled: isComparable(runIds), placeholderData: keepPreviousData });
}
