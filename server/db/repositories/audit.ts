import { iso, parseJson } from '../rows';
import type { Executor } from './executor';

export interface AuditEntry {
  teamId: number | null;
  actorUserId: number | null;
  action: string;
  targetType?: string | null;
  targetId?: string | number | null;
  details?: Record<string, unknown> | null;
}

export interface AuditRecord extends AuditEntry {
  id: number;
  createdAt: string;
}

export interface AuditFilter {
  actorUserId?: number;
  action?: string;
  targetType?: string;
  targetId?: string;
  /** Only entries older than this id (the page cursor). */
  beforeId?: number;
}

export interface AuditPageRecord extends AuditRecord {
  actorName: string | null;
}

export function auditRepository(db: Executor) {
  return {
    async insert(entry: AuditEntry): Promise<void> {
      await db('audit_log').insert({
        team_id: entry.teamId,
        actor_user_id: entry.actorUserId,
        action: entry.action,
        target_type: entry.targetType ?? null,
        target_id: entry.targetId === undefined || entry.targetId === null ? null : String(entry.targetId),
        details: entry.details ? JSON.stringify(entry.details) : null,
      });
    },
    /** One page of a team's trail, newest first, with the actor's name (null when the account is gone). */
    async page(teamId: number, filter: AuditFilter, limit: number): Promise<AuditPageRecord[]> {
      const q = db('audit_log as a').leftJoin('users as u', 'u.id', 'a.actor_user_id').where('a.team_id', teamId);
      if (filter.actorUserId !== undefined) q.andWhere('a.actor_user_id', filter.actorUserId);
      if (filter.action !== undefined) q.andWhere('a.action', filter.action);
      if (filter.targetType !== undefined) q.andWhere('a.target_type', filter.targetType);
      if (filter.targetId !== undefined) q.andWhere('a.target_id', filter.targetId);
      if (filter.beforeId !== undefined) q.andWhere('a.id', '<', filter.beforeId);
      const rows = (await q.orderBy('a.id', 'desc').limit(limit).select('a.*', 'u.name as actor_name')) as {
        id: number | string;
        team_id: number | null;
        actor_user_id: number | null;
        actor_name: string | null;
        action: string;
        target_type: string | null;
        target_id: string | null;
        details: unknown;
        created_at: Date;
      }[];
      return rows.map((r) => ({
        id: Number(r.id),
        teamId: r.team_id,
        actorUserId: r.actor_user_id,
        actorName: r.actor_name,
        action: r.action,
        targetType: r.target_type,
        targetId: r.target_id,
        details: parseJson<Record<string, unknown>>(r.details),
        createdAt: iso(r.created_at),
      }));
    },
    async listForTeam(teamId: number, limit = 100): Promise<AuditRecord[]> {
      const rows = (await db('audit_log').where({ team_id: teamId }).orderBy('id', 'desc').limit(limit)) as {
        id: number;
        team_id: number | null;
        actor_user_id: number | null;
        action: string;
        target_type: string | null;
        target_id: string | null;
        details: unknown;
        created_at: Date;
      }[];
      return rows.map((r) => ({
        id: r.id,
        teamId: r.team_id,
        actorUserId: r.actor_user_id,
        action: r.action,
        targetType: r.target_type,
        targetId: r.target_id,
        details: parseJson<Record<string, unknown>>(r.details),
        createdAt: iso(r.created_at),
      }));
    },
  };
}

export type AuditRepository = ReturnType<typeof auditRepository>;
