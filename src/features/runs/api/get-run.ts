import { useQuery } from '@tanstack/react-query';
import { isTerminal, runQueryOptions } from '../../../lib/queries/runs';

export { isTerminal, runQueryOptions };

/**
 * The run, kept current by the event stream (useRunEvents writes into this cache entry). `poll` is the fallback for
 * when the stream is down: it asks every 2 s and switches itself off once the run reaches a terminal state.
 */
export function useRun(teamId: number, runId: number, { poll = false }: { poll?: boolean } = {}) {
  return useQuery({
    ...runQueryOptions(teamId, runId),
    refetchInterval: (query) => (poll && !isTerminal(query.state.data) ? 2_000 : false),
  });
}
