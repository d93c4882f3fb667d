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
  teamWorkers: '/teams/:teamId/workers',
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
  teamEvaluations: '/teams/:teamId/evaluations',
  teamEvaluation: '/teams/:teamId/evaluations/:jobId',
  teamApiReference: '/teams/:teamId/api',
  teamReleases: '/teams/:teamId/releases',
  teamRelease: '/teams/:teamId/releases/:releaseId',
  teamReleaseReport: '/teams/:teamId/releases/:releaseId/report',
  teamActivity: '/teams/:teamId/activity',
} as const;

type TeamId = number | string;

/** The `:name` parameters of a route pattern, as a type: '/teams/:teamId/runs/:runId' gives 'teamId' | 'runId'. */
type ParamsOf<P extends string> = P extends `${string}:${infer Name}/${infer Rest}`
  ? Name | ParamsOf<`/${Rest}`>
  : P extends `${string}:${infer Name}`
    ? Name
    : never;

/** A path from its pattern: each `:name` replaced by its value, encoded as one path segment. */
export function fillPath<P extends string>(pattern: P, params: Record<ParamsOf<P>, number | string>): string {
  return pattern.replace(/:(\w+)/g, (_, name: string) => encodeURIComponent(String((params as Record<string, number | string>)[name])));
}

/** A query string (with its '?') from the entries that are present, or nothing. */
function query(entries: Array<[string, string | undefined]>): string {
  const present = entries.filter((entry): entry is [string, string] => entry[1] !== undefined && entry[1] !== '');
  return present.length > 0 ? `?${present.map(([k, v]) => `${k}=${encodeURIComponent(v)}`).join('&')}` : '';
}

/** Links, built from `paths` so that each path is written once (the router reads the same table). */
export const href = {
  /** `email` fills the address in (an invitation knows which account must sign in). */
  signIn: (returnTo?: string, email?: string) => `${paths.signIn}${query([['returnTo', returnTo === '/' ? undefined : returnTo], ['email', email]])}`,
  signUp: () => paths.signUp,
  signUpFinish: (token: string) => fillPath(paths.signUpFinish, { token }),
  accountPassword: () => paths.accountPassword,
  forgotPassword: () => paths.forgotPassword,
  resetPassword: (token: string) => fillPath(paths.resetPassword, { token }),
  invitation: (token: string) => fillPath(paths.invitation, { token }),
  home: () => paths.home,
  team: (teamId: TeamId) => fillPath(paths.team, { teamId }),
  teamMembers: (teamId: TeamId) => fillPath(paths.teamMembers, { teamId }),
  teamOutbox: (teamId: TeamId) => fillPath(paths.teamOutbox, { teamId }),
  teamWorkers: (teamId: TeamId) => fillPath(paths.teamWorkers, { teamId }),
  teamImageSets: (teamId: TeamId) => fillPath(paths.teamImageSets, { teamId }),
  teamImageSet: (teamId: TeamId, setId: number | string) => fillPath(paths.teamImageSet, { teamId, setId }),
  teamRuns: (teamId: TeamId) => fillPath(paths.teamRuns, { teamId }),
  /** `from` copies that run's configuration into the form ("run again with changes"). */
  teamNewRun: (teamId: TeamId, from?: number | string) => `${fillPath(paths.teamNewRun, { teamId })}${query([['from', from === undefined ? undefined : String(from)]])}`,
  teamRun: (teamId: TeamId, runId: number | string) => fillPath(paths.teamRun, { teamId, runId }),
  teamImportCodebook: (teamId: TeamId) => fillPath(paths.teamImportCodebook, { teamId }),
  teamCodebook: (teamId: TeamId, codebookId: number | string) => fillPath(paths.teamCodebook, { teamId, codebookId }),
  teamCodebooks: (teamId: TeamId) => fillPath(paths.teamCodebooks, { teamId }),
  /** `runIds` in order: the first is the reference of every pair (commas kept readable in the link). */
  teamCompare: (teamId: TeamId, runIds?: readonly number[]) =>
    `${fillPath(paths.teamCompare, { teamId })}${runIds && runIds.length > 0 ? `?runs=${runIds.join(',')}` : ''}`,
  teamEvaluations: (teamId: TeamId) => fillPath(paths.teamEvaluations, { teamId }),
  teamEvaluation: (teamId: TeamId, jobId: number | string) => fillPath(paths.teamEvaluation, { teamId, jobId }),
  teamApiReference: (teamId: TeamId) => fillPath(paths.teamApiReference, { teamId }),
  teamReleases: (teamId: TeamId) => fillPath(paths.teamReleases, { teamId }),
  teamRelease: (teamId: TeamId, releaseId: number | string) => fillPath(paths.teamRelease, { teamId, releaseId }),
  teamReleaseReport: (teamId: TeamId, releaseId: number | string) => fillPath(paths.teamReleaseReport, { teamId, releaseId }),
  /** Filters as the activity page reads them from its query string. */
  teamActivity: (teamId: TeamId, filters: { actor?: number; action?: string; targetType?: string; targetId?: string } = {}) =>
    `${fillPath(paths.teamActivity, { teamId })}${query([
      ['actor', filters.actor === undefined ? undefined : String(filters.actor)],
      ['action', filters.action],
      ['targetType', filters.targetType],
      ['targetId', filters.targetId],
    ])}`,
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
      { label: 'Activity', to: (teamId) => href.teamActivity(teamId) },
      { label: 'Outbox', to: href.teamOutbox, roles: ['admin'] },
      { label: 'Workers', to: href.teamWorkers, roles: ['admin'] },
      { label: 'API', to: href.teamApiReference },
    ],
  },
  {
    label: 'Studio',
    entries: [
      { label: 'Image sets', to: href.teamImageSets },
      { label: 'Runs', to: href.teamRuns },
      { label: 'Compare', to: (teamId) => href.teamCompare(teamId) },
      { label: 'Codebooks', to: href.teamCodebooks },
      { label: 'Releases', to: href.teamReleases },
      { label: 'Evaluations', to: href.teamEvaluations },
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
