import type { QueryClient } from '@tanstack/react-query';
import { useEffect } from 'react';
import { NavLink, Outlet, useNavigate, useNavigation, type LoaderFunctionArgs } from 'react-router-dom';
import { href, navigationFor } from '../../config/routes';
import { rememberTeam } from '../../lib/auth';
import { AppShell, NavSection, navLinkClass } from '../../components/layouts/app-shell';
import { LoadingState } from '../../components/ui/states';
import { TeamSwitcher } from '../../features/auth/components/team-switcher';
import { UserMenu } from '../../features/auth/components/user-menu';
import { requireTeam } from '../session';
import { useCurrentTeam } from '../use-team';

export const clientLoader = (queryClient: QueryClient) => async ({ request, params }: LoaderFunctionArgs) => {
  await requireTeam(queryClient, request, params.teamId);
  return null;
};

export function Component() {
  const navigate = useNavigate();
  const navigation = useNavigation();
  const { me, team, teamId } = useCurrentTeam();

  useEffect(() => {
    if (team) rememberTeam(team.id);
  }, [team]);

  if (!me || !team) return <LoadingState label="Loading your team…" className="justify-center" />;

  return (
    <AppShell
      busy={navigation.state === 'loading'}
      headerCenter={<TeamSwitcher teams={me.teams} currentTeamId={teamId} onSelect={(id) => navigate(href.team(id))} />}
      headerEnd={<UserMenu user={me.user} onSignedOut={() => navigate(href.signIn(), { replace: true })} />}
      navigation={navigationFor(team.role).map((section) => (
        <NavSection key={section.label} label={section.label}>
          {section.entries.map((entry) => (
            <li key={entry.label}>
              <NavLink to={entry.to(team.id)} end={entry.end} className={navLinkClass}>
                {entry.label}
              </NavLink>
            </li>
          ))}
        </NavSection>
      ))}
    >
      <Outlet />
    </AppShell>
  );
}
