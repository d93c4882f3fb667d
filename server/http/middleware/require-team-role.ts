import type { RequestHandler } from 'express';
import { pathId, roles as allRoles, type Role } from '../../contracts';
import { forbidden, notFound, unauthenticated } from '../../errors';
import { withMeta } from './route-meta';

export interface MembershipLookup {
  membership(teamId: number, userId: number): Promise<{ role: Role } | null>;
}

/**
 * Loads the caller's membership of req.params.teamId. Outsiders get 404, as if the team did not exist,
 * so ids of other teams reveal nothing; members without one of the roles get 403.
 */
export function requireTeamRoleFactory(teams: MembershipLookup) {
  return (...roles: Role[]): RequestHandler =>
    withMeta(async (req, _res, next) => {
      if (!req.user) return next(unauthenticated());
      const teamId = pathId.safeParse(req.params.teamId);
      if (!teamId.success) return next(notFound('Team'));
      const membership = await teams.membership(teamId.data, req.user.id);
      if (!membership) return next(notFound('Team'));
      if (roles.length > 0 && !roles.includes(membership.role)) {
        return next(forbidden(`This needs the ${roles.join(' or ')} role in the team`));
      }
      req.membership = { teamId: teamId.data, role: membership.role };
      next();
    }, { kind: 'role', roles: roles.length > 0 ? roles : allRoles });
}

export type RequireTeamRole = ReturnType<typeof requireTeamRoleFactory>;
