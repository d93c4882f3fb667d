import { queryOptions, useQuery } from '@tanstack/react-query';
import { activityResponse, type ActivityPage } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { teamKeys } from '../../../lib/queries/keys';

/** The filters of the activity page; absent ones are not sent. */
export type ActivityFilters = { actor?: number; action?: string; targetType?: string; targetId?: string; before?: number };

function queryString(filters: ActivityFilters): string {
  const params = new URLSearchParams();
  for (const [key, value] of Object.entries(filters)) if (value !== undefined && value !== '') params.set(key, String(value));
  const text = params.toString();
  return text ? `?${text}` : '';
}

export function listActivity(teamId: number, filters: ActivityFilters, { signal }: { signal?: AbortSignal } = {}): Promise<ActivityPage> {
  return apiRequest(`/teams/${teamId}/activity${queryString(filters)}`, { signal, schema: activityResponse });
}

export const activityKeys = {
  all: (teamId: number) => [...teamKeys.team(teamId), 'activity'] as const,
  page: (teamId: number, filters: ActivityFilters) => [...activityKeys.all(teamId), filters] as const,
};

export const activityQueryOptions = (teamId: number, filters: ActivityFilters) =>
  queryOptions({ queryKey: activityKeys.page(teamId, filters), queryFn: ({ signal }) => listActivity(teamId, filters, { signal }) });

export function useActivity(teamId: number, filters: ActivityFilters) {
  return useQuery(activityQueryOptions(teamId, filters));
}
