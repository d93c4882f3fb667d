import { queryOptions, useQuery, keepPreviousData } from '@tanstack/react-query';
import { compareResponse, COMPARE_MAX_RUNS, COMPARE_MIN_RUNS, type BdMethod, type CompareRate, type CompareResult } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { compareKeys } from './keys';

function comparisonQuery(runIds: readonly number[], rate: CompareRate, method: BdMethod): string {
  return new URLSearchParams({ runs: runIds.join(','), rate, method }).toString().replace(/%2C/g, ',');
}

export function getComparison(teamId: number, runIds: readonly number[], rate: CompareRate, method: BdMethod, { signal }: { signal?: AbortSignal } = {}): Promise<CompareResult> {
  return apiRequest(`/teams/${teamId}/compare?${comparisonQuery(runIds, rate, method)}`, { signal, schema: compareResponse });
}

/** The address of the Bjøntegaard table download of the same comparison (a plain link: the browser saves the file). */
export function bdTableDownloadUrl(teamId: number, runIds: readonly number[], rate: CompareRate, method: BdMethod, format: 'csv' | 'json'): string {
  return `${env.apiBasePath}/teams/${teamId}/compare/bd-table?${comparisonQuery(runIds, rate, method)}&format=${format}`;
}

export function isComparable(runIds: readonly number[]): boolean {
  return runIds.length >= COMPARE_MIN_RUNS && runIds.length <= COMPARE_MAX_RUNS && new Set(runIds).size === runIds.length;
}

export const comparisonQueryOptions = (teamId: number, runIds: readonly number[], rate: CompareRate, method: BdMethod) =>
  queryOptions({
    queryKey: compareKeys.result(teamId, runIds, rate, method),
    queryFn: ({ signal }) => getComparison(teamId, runIds, rate, method, { signal }),
  });

/** Keeps the previous result on screen while a changed selection loads, so the chart does not blink away. */
export function useComparison(teamId: number, runIds: readonly number[], rate: CompareRate, method: BdMethod) {
  return useQuery({ ...comparisonQueryOptions(teamId, runIds, rate, method), enabled: isComparable(runIds), placeholderData: keepPreviousData });
}
