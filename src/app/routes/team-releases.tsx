import type { QueryClient } from '@tanstack/react-query';
import type { LoaderFunctionArgs } from 'react-router-dom';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { EmptyState, ErrorState, LoadingState } from '../../components/ui/states';
import { releasesQueryOptions, useReleases } from '../../features/releases/api/list-releases';
import { ReleasesTable } from '../../features/releases/components/releases-table';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(releasesQueryOptions(team.id));
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const releases = useReleases(teamId);
  if (!team) return null;
  const released = releases.data?.filter((r) => r.state === 'approved') ?? [];
  const open = releases.data?.filter((r) => r.state !== 'approved') ?? [];
  return (
    <>
      <title>{`Releases · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Releases"
        description="Codebooks proposed for release, reviewed by a second engineer or an admin, and frozen once approved. Propose one from its codebook page."
      />
      {releases.isPending && <LoadingState label="Loading releases…" />}
      {releases.isError && <ErrorState message={messageOf(releases.error)} onRetry={() => void releases.refetch()} />}
      {releases.data && (
        <div className="flex flex-col gap-6">
          <Panel title="Under review" titleId="releases-open" description={plural(open.length, 'proposal')}>
            {open.length === 0 ? <EmptyState title="Nothing awaits review" /> : <ReleasesTable teamId={team.id} releases={open} caption="Proposals under review or returned" />}
          </Panel>
          <Panel title="Released" titleId="releases-done" description={plural(released.length, 'release')}>
            {released.length === 0 ? <EmptyState title="No codebook has been released yet" /> : <ReleasesTable teamId={team.id} releases={released} caption="Released codebooks" />}
          </Panel>
        </div>
      )}
    </>
  );
}
