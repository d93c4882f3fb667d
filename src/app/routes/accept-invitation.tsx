import { useQuery } from '@tanstack/react-query';
import { Link, useNavigate, useParams } from 'react-router-dom';
import { rememberTeam } from '../../lib/auth';
import { meQueryOptions } from '../../features/auth/api/get-me';
import { useSignOut } from '../../features/auth/api/sign-out';
import { href } from '../../config/routes';
import { isApiError, messageOf } from '../../lib/api-client';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { LoadingState, ErrorState } from '../../components/ui/states';
import { useInvitation } from '../../features/invitations/api/get-invitation';
import { AcceptInvitationPanel, type SignedInAs } from '../../features/invitations/components/accept-invitation-panel';

// No loader: an expired or unknown token is an expected outcome shown in the page, not a route error.
export function Component() {
  const { token = '' } = useParams();
  const navigate = useNavigate();
  const invitation = useInvitation(token);
  // Whether this browser is signed in, and as whom: an existing account accepts only as itself.
  const me = useQuery({ ...meQueryOptions(), meta: { redirectOnUnauthenticated: false } });
  const signOut = useSignOut();
  // 410 says why a one-time link is spent (accepted, revoked, expired); 404 means it never existed.
  const spent = isApiError(invitation.error) && (invitation.error.status === 410 || invitation.error.status === 404);
  const signedInAs: SignedInAs = me.data ? me.data.user.email : me.isError ? null : undefined;
  const here = href.invitation(token);
  const signInHref = href.signIn(here, invitation.data?.email);

  return (
    <AuthLayout
      title={invitation.data ? `Join ${invitation.data.teamName}` : 'Team invitation'}
      aside={
        <>
          Not expecting this?{' '}
          <Link to={href.signIn()} className="font-medium text-ember-700 hover:underline">
            Go to sign in
          </Link>
        </>
      }
    >
      <title>Invitation · Cellwright</title>
      {invitation.isPending && <LoadingState label="Checking your invitation…" />}
      {invitation.isError && (
        <ErrorState
          title={spent ? 'This invitation is no longer valid' : 'The invitation could not be checked'}
          message={
            spent
              ? `${isApiError(invitation.error) && invitation.error.status === 410 ? `${messageOf(invitation.error)}.` : 'The link is unknown.'} Ask the team admin for a new invitation if you still need access.`
              : messageOf(invitation.error)
          }
          onRetry={spent ? undefined : () => void invitation.refetch()}
        />
      )}
      {invitation.data && (
        <AcceptInvitationPanel
          token={token}
          preview={invitation.data}
          signedInAs={signedInAs}
          signInHref={signInHref}
          switching={signOut.isPending}
          onSwitchAccount={() => signOut.mutate(undefined, { onSettled: () => navigate(signInHref) })}
          onAccepted={({ team }) => {
            rememberTeam(team.id);
            navigate(href.team(team.id), { replace: true });
          }}
        />
      )}
    </AuthLayout>
  );
}
