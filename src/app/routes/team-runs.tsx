import type { QueryClient } from '@tanstack/react-query';
import { Link, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { buttonClass } from '../../components/ui/button';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { runsQueryOptions, useRuns } from '../../lib/queries/runs';
import { RunsTable } from '../../features/runs/components/runs-table';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(runsQueryOptions(team.id));
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const runs = useRuns(teamId);
  if (!team) return null;
  const canRun = team.role !== 'viewer';

  return (
    <>
      <title>{`Runs · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Runs"
        description="Each run trains a sweep of codebook sizes with the generalised Lloyd algorithm, then measures them on held-out images."
        actions={
          <>
            {runs.data && runs.data.length >= 2 && (
              <Link to={href.teamCompare(team.id, runs.data.slice(0, 2).map((r) => r.id))} className={buttonClass('secondary')}>
                Compare runs
              </Link>
            )}
            {canRun && (
              <Link to={href.teamNewRun(team.id)} className={buttonClass('primary')}>
                New run
              </Link>
            )}
          </>
        }
      />
      <Panel title="All runs" titleId="runs-list" description={runs.data ? plural(runs.data.length, 'run') : undefined} bodyClassName="px-5 py-2">
        {runs.isPending && <LoadingState label="Loading runs…" />}
        {runs.isError && <ErrorState message={messageOf(runs.error)} onRetry={() => void runs.refetch()} className="my-3" />}
        {runs.data?.length === 0 && (
          <EmptyState title="No runs yet" className="my-3">
            {canRun ? 'Start one with “New run”: choose training and held-out images, a patch shape and a bit budget.' : 'Engineers of this team start runs; they will be listed here.'}
          </EmptyState>
        )}
        {runs.data && runs.data.length > 0 && <RunsTable teamId={team.id} runs={runs.data} />}
      </Panel>
    </>
  );
}
