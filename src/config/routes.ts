import type { Role } from '../../server/contracts';

/** Route patterns, for the router. Links are built with `href` below so a path lives in one place. */
export const paths = {
  signIn: '/sign-in',
  signUp: '/sign-up',
  signUpFinish: '/sign-up/:token',
  accountPassword: '/account/password',
  forgotPassword: '/forgot-password',
  resetPassword: '/reset-password/:token',
  invitation: '/invite/:token',
  home: '/',
  team: '/teams/:teamId',
  teamMembers: '/teams/:teamId/members',
  teamOutbox: '/teams/:teamId/outbox',
  teamImageSets: '/teams/:teamId/image-sets',
  teamImageSet: '/teams/:teamId/image-sets/:setId',
  teamRuns: '/teams/:teamId/runs',
  // Static "new" outranks the dynamic ":runId" in React Router's matching, so the two never collide.
  teamNewRun: '/teams/:teamId/runs/new',
  teamRun: '/teams/:teamId/runs/:runId',
  teamImportCodebook: '/teams/:teamId/codebooks/import',
  teamCodebook: '/teams/:teamId/codebooks/:codebookId',
  teamCodebooks: '/teams/:teamId/codebooks',
  teamCompare: '/teams/:teamId/compare',
} as const;

type TeamId = number | string;

export const href = {
  /** `email` fills the address in (an invitation knows which account must sign in). */
  signIn: (returnTo?: string, email?: string) => {
    const query = [
      ...(returnTo && returnTo !== '/' ? [`returnTo=${encodeURIComponent(returnTo)}`] : []),
      ...(email ? [`email=${encodeURIComponent(email)}`] : []),
    ];
    return query.length > 0 ? `${paths.signIn}?${query.join('&')}` : paths.signIn;
  },
  signUp: () => paths.signUp,
  signUpFinish: (token: string) => `/sign-up/${encodeURIComponent(token)}`,
  accountPassword: () => paths.accountPassword,
  forgotPassword: () => paths.forgotPassword,
  resetPassword: (token: string) => `/reset-password/${encodeURIComponent(token)}`,
  invitation: (token: string) => `/invite/${encodeURIComponent(token)}`,
  home: () => paths.home,
  team: (teamId: TeamId) => `/teams/${teamId}`,
  teamMembers: (teamId: TeamId) => `/teams/${teamId}/members`,
  teamOutbox: (teamId: TeamId) => `/teams/${teamId}/outbox`,
  teamImageSets: (teamId: TeamId) => `/teams/${teamId}/image-sets`,
  teamImageSet: (teamId: TeamId, setId: number | string) => `/teams/${teamId}/image-sets/${setId}`,
  teamRuns: (teamId: TeamId) => `/teams/${teamId}/runs`,
  /** `from` copies that run's configuration into the form ("run again with changes"). */
  teamNewRun: (teamId: TeamId, from?: number | string) => `/teams/${teamId}/runs/new${from === undefined ? '' : `?from=${from}`}`,
  teamRun: (teamId: TeamId, runId: number | string) => `/teams/${teamId}/runs/${runId}`,
  teamImportCodebook: (teamId: TeamId) => `/teams/${teamId}/codebooks/import`,
  teamCodebook: (teamId: TeamId, codebookId: number | string) => `/teams/${teamId}/codebooks/${codebookId}`,
  teamCodebooks: (teamId: TeamId) => `/teams/${teamId}/codebooks`,
  /** `runIds` in order: the first is the reference of every pair. */
  teamCompare: (teamId: TeamId, runIds?: readonly number[]) => `/teams/${teamId}/compare${runIds && runIds.length > 0 ? `?runs=${runIds.join(',')}` : ''}`,
} as const;

export type TeamNavEntry = {
  label: string;
  to: (teamId: TeamId) => string;
  /** Exact match for the team's index page, prefix match for sections with sub-pages. */
  end?: boolean;
  /** Roles that see the entry; absent means every member. */
  roles?: readonly Role[];
};

export type TeamNavSection = { label: string; entries: readonly TeamNavEntry[] };

/**
 * The team navigation. Studio sections (image sets, runs, compare, codebooks) join as their own
 * section when their features land; entries are filtered by role before rendering, and the server
 * enforces the same roles, so hiding an entry is convenience, not protection.
 */
export const teamNavigation: readonly TeamNavSection[] = [
  {
    label: 'Team',
    entries: [
      { label: 'Home', to: href.team, end: true },
      { label: 'Members', to: href.teamMembers },
      { label: 'Outbox', to: href.teamOutbox, roles: ['admin'] },
    ],
  },
  {
    label: 'Studio',
    entries: [
      { label: 'Image sets', to: href.teamImageSets },
      { label: 'Runs', to: href.teamRuns },
      { label: 'Compare', to: (teamId) => href.teamCompare(teamId) },
      { label: 'Codebooks', to: href.teamCodebooks },
    ],
  },
];

export function navigationFor(role: Role): TeamNavSection[] {
  return teamNavigation
    .map((section) => ({
      ...section,
      entries: section.entries.filter((entry) => !entry.roles || entry.roles.includes(role)),
    }))
    .filter((section) => section.entries.length > 0);
}
