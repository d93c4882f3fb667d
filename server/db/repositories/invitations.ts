import type { Invitation, Role } from '../../contracts';
import { iso, isoOrNull } from '../rows';
import { insertedId, type Executor } from './executor';

export interface InvitationRecord {
  id: number;
  teamId: number;
  email: string;
  role: Role;
  invitedBy: number | null;
  createdAt: string;
  expiresAt: string;
  acceptedAt: string | null;
  revokedAt: string | null;
}

interface InvitationRow {
  id: number;
  team_id: number;
  email: string;
  role: Role;
  invited_by: number | null;
  created_at: Date;
  expires_at: Date;
  accepted_at: Date | null;
  revoked_at: Date | null;
}

const columns = ['id', 'team_id', 'email', 'role', 'invited_by', 'created_at', 'expires_at', 'accepted_at', 'revoked_at'];

const toInvitation = (r: InvitationRow): InvitationRecord => ({
  id: r.id,
  teamId: r.team_id,
  email: r.email,
  role: r.role,
  invitedBy: r.invited_by,
  createdAt: iso(r.created_at),
  expiresAt: iso(r.expires_at),
  acceptedAt: isoOrNull(r.accepted_at),
  revokedAt: isoOrNull(r.revoked_at),
});

export function invitationsRepository(db: Executor) {
  return {
    async create(input: {
      teamId: number;
      email: string;
      role: Role;
      tokenHash: string;
      invitedBy: number;
      expiresAt: Date;
    }): Promise<InvitationRecord> {
      const id = insertedId(
        await db('invitations').insert({
          team_id: input.teamId,
          email: input.email.toLowerCase(),
          role: input.role,
          token_hash: input.tokenHash,
          invited_by: input.invitedBy,
          expires_at: input.expiresAt,
        }),
      );
      return toInvitation((await db<InvitationRow>('invitations').where({ id }).first(columns))!);
    },
    async findByTokenHash(tokenHash: string, opts: { forUpdate?: boolean } = {}): Promise<InvitationRecord | null> {
      const q = db('invitations').where({ token_hash: tokenHash }).first(columns);
      const row = (await (opts.forUpdate ? q.forUpdate() : q)) as InvitationRow | undefined;
      return row ? toInvitation(row) : null;
    },
    async findInTeam(teamId: number, id: number, opts: { forUpdate?: boolean } = {}): Promise<InvitationRecord | null> {
      const q = db<InvitationRow>('invitations').where({ id, team_id: teamId }).first(columns);
      const row = (await (opts.forUpdate ? q.forUpdate() : q)) as InvitationRow | undefined;
      return row ? toInvitation(row) : null;
    },
    /** Invitations still in force or already accepted, newest first; revoked ones are history only. */
    async listForTeam(teamId: number): Promise<Invitation[]> {
      const rows = (await db('invitations as i')
        .leftJoin('users as u', 'u.id', 'i.invited_by')
        .where('i.team_id', teamId)
        .whereNull('i.revoked_at')
        .orderBy([{ column: 'i.created_at', order: 'desc' }, { column: 'i.id', order: 'desc' }])
        .select('i.id', 'i.email', 'i.role', 'u.name as invited_by_name', 'i.created_at', 'i.expires_at', 'i.accepted_at')) as {
        id: number;
        email: string;
        role: Role;
        invited_by_name: string | null;
        created_at: Date;
        expires_at: Date;
        accepted_at: Date | null;
      }[];
      return rows.map((r) => ({
        id: r.id,
        email: r.email,
        role: r.role,
        invitedBy: r.invited_by_name ?? '',
        createdAt: iso(r.created_at),
        expiresAt: iso(r.expires_at),
        acceptedAt: isoOrNull(r.accepted_at),
      }));
    },
    async markAccepted(id: number, userId: number, at: Date): Promise<void> {
      await db('invitations').where({ id }).update({ accepted_at: at, accepted_by: userId });
    },
    async revoke(id: number, at: Date): Promise<void> {
      await db('invitations').where({ id }).update({ revoked_at: at });
    },
    /** Revokes earlier unaccepted invitations of the same address, so only the newest link works. */
    async revokePending(teamId: number, email: string, at: Date): Promise<number> {
      return db('invitations')
        .where({ team_id: teamId, email: email.toLowerCase() })
        .whereNull('accepted_at')
        .whereNull('revoked_at')
        .update({ revoked_at: at });
    },
    async listEmails(teamId: number): Promise<string[]> {
      const rows = (await db('invitations').where({ team_id: teamId }).distinct('email')) as { email: string }[];
      return rows.map((r) => r.email);
    },
  };
}

export type InvitationsRepository = ReturnType<typeof invitationsRepository>;
