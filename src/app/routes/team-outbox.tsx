import type { QueryClient } from '@tanstack/react-query';
import type { LoaderFunctionArgs } from 'react-router-dom';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { Button } from '../../components/ui/button';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { ErrorState, LoadingState } from '../../components/ui/states';
import { outboxQueryOptions, useOutbox } from '../../features/outbox/api/list-outbox';
import { OutboxList } from '../../features/outbox/components/outbox-list';
import { requireAdmin } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireAdmin(queryClient, request, params.teamId);
  await queryClient.ensureQueryData(outboxQueryOptions(team.id));
  return null;
};

export function Component() {
  const { team, teamId } = useCurrentTeam();
  const outbox = useOutbox(teamId);
  if (!team) return null;

  return (
    <>
      <title>{`Outbox · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Outbox"
        description="Mail this team's actions caused (its invitations, notices of finished jobs) and whether it was delivered. Open a message to read it."
        actions={
          <Button variant="secondary" size="sm" onClick={() => void outbox.refetch()} pending={outbox.isFetching && !outbox.isPending}>
            Refresh
          </Button>
        }
      />
      <Panel title="Team mail" titleId="outbox-messages" description={outbox.data ? plural(outbox.data.messages.length, 'message') : undefined}>
        {outbox.isPending && <LoadingState label="Loading messages…" />}
        {outbox.isError && <ErrorState message={messageOf(outbox.error)} onRetry={() => void outbox.refetch()} />}
        {outbox.data && <OutboxList messages={outbox.data.messages} />}
      </Panel>
    </>
  );
}
