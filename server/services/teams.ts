import type { Member, Role } from '../contracts';
import type { Database } from '../db';
import { conflict, notFound } from '../errors';
import { recordAudit } from './audit';

/** A member's place in a team changed (role changed, or removed); listeners re-check what they granted. */
export interface MembershipChange {
  teamId: number;
  userId: number;
}

export function createTeamsService(deps: { db: Database }) {
  const listeners = new Set<(change: MembershipChange) => void>();
  /** Tells listeners after the change has committed, so a re-check reads the new state. */
  const changed = (change: MembershipChange) => {
    for (const listener of listeners) {
      try {
        listener(change);
      } catch {
        // The change is committed whatever a listener does; a failing one must not turn it into an error.
      }
    }
  };

  /** Throws 409 when the change would leave the team with nobody who can manage it. */
  async function ensureAnotherAdmin(admins: number[], userId: number) {
    if (admins.includes(userId) && admins.length <= 1) {
      throw conflict('A team needs at least one admin; make someone else admin first', { reason: 'last_admin' });
    }
  }

  return {
    /** Calls `listener` after every committed role change and removal; returns the unsubscriber. */
    onMembershipChange(listener: (change: MembershipChange) => void): () => void {
      listeners.add(listener);
      return () => listeners.delete(listener);
    },

    async membership(teamId: number, userId: number) {
      return deps.db.repos.memberships.find(teamId, userId);
    },

    async listMembers(teamId: number): Promise<Member[]> {
      return deps.db.repos.memberships.listMembers(teamId);
    },

    async changeRole(teamId: number, actorUserId: number, userId: number, role: Role): Promise<Member> {
      const updated = await deps.db.transaction(async (tx) => {
        const admins = await tx.memberships.lockAdmins(teamId);
        const target = await tx.memberships.find(teamId, userId, { forUpdate: true });
        if (!target) throw notFound('Member');
        if (target.role === role) return false;
        if (role !== 'admin') await ensureAnotherAdmin(admins, userId);
        await tx.memberships.updateRole(teamId, userId, role);
        await recordAudit(tx, {
          teamId,
          actorUserId,
          action: 'member.role_changed',
          targetType: 'user',
          targetId: userId,
          details: { from: target.role, to: role },
        });
        return true;
      });
      if (updated) changed({ teamId, userId });
      const members = await deps.db.repos.memberships.listMembers(teamId);
      const member = members.find((m) => m.userId === userId);
      if (!member) throw notFound('Member');
      return member;
    },

    async removeMember(teamId: number, actorUserId: number, userId: number): Promise<void> {
      await deps.db.transaction(async (tx) => {
        const admins = await tx.memberships.lockAdmins(teamId);
        const target = await tx.memberships.find(teamId, userId, { forUpdate: true });
        if (!target) throw notFound('Member');
        await ensureAnotherAdmin(admins, userId);
        await tx.memberships.remove(teamId, userId);
        await recordAudit(tx, {
          teamId,
          actorUserId,
          action: 'member.removed',
          targetType: 'user',
          targetId: userId,
          details: { role: target.role },
        });
      });
      changed({ teamId, userId });
    },
  };
}

export type TeamsService = ReturnType<typeof createTeamsService>;
