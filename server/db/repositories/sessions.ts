import { iso, isoOrNull } from '../rows';
import type { Executor } from './executor';
import type { UserRecord } from './users';

export interface SessionRecord {
  id: string;
  userId: number;
  createdAt: string;
  expiresAt: string;
  revokedAt: string | null;
  lastSeenAt: string | null;
}

interface LiveSessionRow {
  session_id: string;
  last_seen_at: Date | null;
  id: number;
  email: string;
  name: string;
  password_hash: string;
  token_version: number;
  created_at: Date;
}

export function sessionsRepository(db: Executor) {
  return {
    async create(input: { id: string; userId: number; createdAt: Date; expiresAt: Date }): Promise<void> {
      await db('sessions').insert({ id: input.id, user_id: input.userId, created_at: input.createdAt, expires_at: input.expiresAt });
    },
    /** The session and its user, when the session is neither revoked nor expired at `now`; one round trip. */
    async findLive(id: string, userId: number, now: Date): Promise<{ user: UserRecord; lastSeenAt: string | null } | null> {
      const row = (await db('sessions as s')
        .join('users as u', 'u.id', 's.user_id')
        .where({ 's.id': id, 's.user_id': userId })
        .whereNull('s.revoked_at')
        .andWhere('s.expires_at', '>', now)
        .first('s.id as session_id', 's.last_seen_at', 'u.id', 'u.email', 'u.name', 'u.password_hash', 'u.token_version', 'u.created_at')) as
        | LiveSessionRow
        | undefined;
      if (!row) return null;
      return {
        user: { id: row.id, email: row.email, name: row.name, passwordHash: row.password_hash, tokenVersion: row.token_version, createdAt: iso(row.created_at) },
        lastSeenAt: isoOrNull(row.last_seen_at),
      };
    },
    async touch(id: string, at: Date): Promise<void> {
      await db('sessions').where({ id }).update({ last_seen_at: at });
    },
    async revoke(id: string, at: Date): Promise<boolean> {
      return Number(await db('sessions').where({ id }).whereNull('revoked_at').update({ revoked_at: at })) > 0;
    },
    /** Revokes every live session of the user except `keep` (the caller's own, after a password change). */
    async revokeAllForUser(userId: number, at: Date, keep?: string): Promise<number> {
      const q = db('sessions').where({ user_id: userId }).whereNull('revoked_at');
      if (keep) q.andWhereNot({ id: keep });
      return Number(await q.update({ revoked_at: at }));
    },
    /** Forgets the user's sessions that ended before `before`; keeps the table from growing with every sign-in. */
    async pruneForUser(userId: number, before: Date): Promise<void> {
      await db('sessions')
        .where({ user_id: userId })
        .andWhere((q) => q.where('expires_at', '<', before).orWhere('revoked_at', '<', before))
        .delete();
    },
    async listForUser(userId: number): Promise<SessionRecord[]> {
      const rows = (await db('sessions').where({ user_id: userId }).orderBy('created_at')) as {
        id: string;
        user_id: number;
        created_at: Date;
        expires_at: Date;
        revoked_at: Date | null;
        last_seen_at: Date | null;
      }[];
      return rows.map((r) => ({
        id: r.id,
        userId: r.user_id,
        createdAt: iso(r.created_at),
        expiresAt: iso(r.expires_at),
        revokedAt: isoOrNull(r.revoked_at),
        lastSeenAt: isoOrNull(r.last_seen_at),
      }));
    },
  };
}

export type SessionsRepository = ReturnType<typeof sessionsRepository>;
