import type { QueryClient } from '@tanstack/react-query';
import { redirect, useNavigate, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { lastTeam } from '../../lib/auth';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { Button } from '../../components/ui/button';
import { useSignOut } from '../../features/auth/api/sign-out';
import { requireSession } from '../session';

export const clientLoader = (queryClient: QueryClient) => async ({ request }: LoaderFunctionArgs) => {
  const me = await requireSession(queryClient, request);
  if (me.teams.length === 0) return null;
  const remembered = lastTeam();
  const team = me.teams.find((candidate) => candidate.id === remembered) ?? me.teams[0];
  throw redirect(href.team(team.id));
};

/** Reached only by someone who belongs to no team, e.g. after an admin removed them. */
export function Component() {
  const navigate = useNavigate();
  const signOut = useSignOut();
  return (
    <AuthLayout title="You are not in a team" description="Your account exists, but no team lists you as a member at the moment.">
      <title>No team · Cellwright</title>
      <div className="flex flex-col items-start gap-4 text-base text-ink-700">
        <p>Ask a team admin to invite you again; the invitation link adds the team to this account.</p>
        <Button variant="secondary" onClick={() => signOut.mutate(undefined, { onSuccess: () => navigate(href.signIn()) })} pending={signOut.isPending}>
          Sign out
        </Button>
      </div>
    </AuthLayout>
  );
}
