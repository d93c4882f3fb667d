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
