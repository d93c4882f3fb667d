import { useQuery } from '@tanstack/react-query';
import { runQueryOptions } from '../../../lib/queries/runs';

/** The run whose configuration the form copies (the shared run entry); its configuration never changes. */
export function useSourceRun(teamId: number, runId: number | null) {
  return useQuery({ ...runQueryOptions(teamId, runId ?? 0), staleTime: Infinity, enabled: runId !== null });
}
