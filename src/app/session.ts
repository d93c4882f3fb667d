import type { QueryClient } from '@tanstack/react-query';
import { data, redirect } from 'react-router-dom';
import type { MeResponse, TeamWithRole } from '../../server/contracts';
import { href } from '../config/routes';
import { meQueryOptions } from '../features/auth/api/get-me';
import { isApiError } from '../lib/api-client';

/**
 * Loader guard: the signed-in user, or a redirect to sign-in that returns to the page asked for.
 * The returnTo comes from the request being loaded, not the page on screen, which is why this
 * guard, not the global 401 handler, deals with sessions that end between navigations.
 */
export async function requireSession(queryClient: QueryClient, request: Request): Promise<MeResponse> {
  try {
    return await queryClient.ensureQueryData({ ...meQueryOptions(), revalidateIfStale: true });
  } catch (error) {
    if (isApiError(error) && error.isUnauthenticated) {
      const url = new URL(request.url);
      throw redirect(href.signIn(`${url.pathname}${url.search}`));
    }
    throw error;
  }
}

export function parseTeamId(value: string | undefined): number {
  const teamId = Number(value);
  if (!Number.isInteger(teamId) || teamId <= 0) throw data('No such team', { status: 404 });
  return teamId;
}

/** The team named in the URL, if the user belongs to it; otherwise the same 404 the API gives. */
export async function requireTeam(queryClient: QueryClient, request: Request, teamIdParam: string | undefined): Promise<{ me: MeResponse; team: TeamWithRole }> {
  const me = await requireSession(queryClient, request);
  const teamId = parseTeamId(teamIdParam);
  const team = me.teams.find((candidate) => candidate.id === teamId);
  if (!team) throw data('No such team', { status: 404 });
  return { me, team };
}

export async function requireAdmin(queryClient: QueryClient, request: Request, teamIdParam: string | undefined) {
  const context = await requireTeam(queryClient, request, teamIdParam);
  if (context.team.role !== 'admin') throw data('Only team admins can open this page', { status: 403 });
  return context;
}
