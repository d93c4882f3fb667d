import { useQueryClient, type QueryClient } from '@tanstack/react-query';
import type { LoaderFunctionArgs } from 'react-router-dom';
import { messageOf } from '../../lib/api-client';
import { plural } from '../../lib/format';
import { PageHeader } from '../../components/ui/page-header';
import { Panel } from '../../components/ui/panel';
import { ErrorState, LoadingState } from '../../components/ui/states';
import { meQueryOptions } from '../../features/auth/api/get-me';
import { invitationsQueryOptions, useInvitations } from '../../features/members/api/list-invitations';
import { membersQueryOptions, useMembers } from '../../features/members/api/list-members';
import { InviteMemberForm } from '../../features/members/components/invite-member-form';
import { MembersTable } from '../../features/members/components/members-table';
import { PendingInvitations } from '../../features/members/components/pending-invitations';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export { RouteError as ErrorBoundary } from './route-error';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  const { team } = await requireTeam(queryClient, request, params.teamId);
  await Promise.all([
    queryClient.ensureQueryData(membersQueryOptions(team.id)),
    team.role === 'admin' ? queryClient.ensureQueryData(invitationsQueryOptions(team.id)) : null,
  ]);
  return null;
};

export function Component() {
  const queryClient = useQueryClient();
  const { me, team, teamId } = useCurrentTeam();
  const isAdmin = team?.role === 'admin';
  const members = useMembers(teamId);
  const invitations = useInvitations(teamId, { enabled: isAdmin });
  if (!team || !me) return null;

  return (
    <>
      <title>{`Members · ${team.name} · Cellwright`}</title>
      <PageHeader
        eyebrow={team.name}
        title="Members"
        description={isAdmin ? 'Invite colleagues, set what each of them may do, and remove access.' : 'Everyone in this team and their role. Admins manage membership.'}
      />
      <div className="flex flex-col gap-6">
        <Panel title="People" titleId="members-people" description={members.data ? plural(members.data.members.length, 'member') : undefined}>
          {members.isPending && <LoadingState label="Loading members…" />}
          {members.isError && <ErrorState message={messageOf(members.error)} onRetry={() => void members.refetch()} />}
          {members.data && (
            <MembersTable
              teamId={team.id}
              members={members.data.members}
              currentUserId={me.user.id}
              canManage={isAdmin}
              onOwnMembershipChanged={() => void queryClient.invalidateQueries({ queryKey: meQueryOptions().queryKey })}
            />
          )}
        </Panel>
        {isAdmin && (
          <>
            <Panel title="Invite a member" titleId="members-invite" description="The invitee gets an e-mail with a link that is valid for 7 days.">
              <InviteMemberForm teamId={team.id} />
            </Panel>
            <Panel title="Pending invitations" titleId="members-pending">
              {invitations.isPending && <LoadingState label="Loading invitations…" />}
              {invitations.isError && <ErrorState message={messageOf(invitations.error)} onRetry={() => void invitations.refetch()} />}
              {invitations.data && <PendingInvitations teamId={team.id} invitations={invitations.data.invitations} />}
            </Panel>
          </>
        )}
      </div>
    </>
  );
}
