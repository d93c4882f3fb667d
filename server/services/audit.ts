import type { ActivityPage, ActivityQuery, AuditActionName } from '../contracts';
import type { AuditEntry, Database, Repositories } from '../db';

/** Actions recorded in audit_log: the contracts' list (server/contracts/activity.ts), which the activity filter offers. */
export type AuditAction = AuditActionName;

/** Written through the caller's transaction so the trail and the change commit together. */
export function recordAudit(repos: Repositories, entry: AuditEntry & { action: AuditAction }): Promise<void> {
  return repos.audit.insert(entry);
}

/** The team's activity log: its audit trail read back a page at a time, newest first (any member may read it). */
export function createActivityService(deps: { db: Database }) {
  return {
    async page(teamId: number, query: ActivityQuery): Promise<ActivityPage> {
      // One row more than asked tells whether an older page exists without a second count query.
      const rows = await deps.db.repos.audit.page(
        teamId,
        { actorUserId: query.actor, action: query.action, targetType: query.targetType, targetId: query.targetId, beforeId: query.before },
        query.limit + 1,
      );
      const entries = rows.slice(0, query.limit).map((r) => ({
        id: r.id,
        action: r.action,
        actor: r.actorUserId === null ? null : { id: r.actorUserId, name: r.actorName ?? '' },
        targetType: r.targetType ?? null,
        targetId: r.targetId === undefined || r.targetId === null ? null : String(r.targetId),
        details: r.details ?? null,
        createdAt: r.createdAt,
      }));
      return { entries, nextBefore: rows.length > query.limit ? entries[entries.length - 1].id : null };
    },
  };
}

export type ActivityService = ReturnType<typeof createActivityService>;
