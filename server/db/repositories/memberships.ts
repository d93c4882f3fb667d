import type { Member, Role, TeamWithRole } from '../../contracts';
import { iso } from '../rows';
import type { Executor } from './executor';

export interface MembershipRecord {
  teamId: number;
  userId: number;
  role: Role;
}

export function membershipsRepository(db: Executor) {
  return {
    async create(input: MembershipRecord): Promise<void> {
      await db('memberships').insert({ team_id: input.teamId, user_id: input.userId, role: input.role });
    },
    async find(teamId: number, userId: number, opts: { forUpdate?: boolean } = {}): Promise<MembershipRecord | null> {
      const q = db('memberships').where({ team_id: teamId, user_id: userId }).first('team_id', 'user_id', 'role');
      const row = (await (opts.forUpdate ? q.forUpdate() : q)) as
        | { team_id: number; user_id: number; role: Role }
        | undefined;
      return row ? { teamId: row.team_id, userId: row.user_id, role: row.role } : null;
    },
    async listMembers(teamId: number): Promise<Member[]> {
      const rows = (await db('memberships as m')
        .join('users as u', 'u.id', 'm.user_id')
        .where('m.team_id', teamId)
        .orderBy([{ column: 'm.created_at' }, { column: 'u.id' }])
        .select('u.id as user_id', 'u.email', 'u.name', 'm.role', 'm.created_at')) as {
        user_id: number;
        email: string;
        name: string;
        role: Role;
        created_at: Date;
      }[];
      return rows.map((r) => ({ userId: r.user_id, email: r.email, name: r.name, role: r.role, joinedAt: iso(r.created_at) }));
    },
    async listTeamsForUser(userId: number): Promise<TeamWithRole[]> {
      const rows = (await db('memberships as m')
        .join('teams as t', 't.id', 'm.team_id')
        .where('m.user_id', userId)
        .orderBy('t.id')
        .select('t.id', 't.name', 'm.role')) as { id: number; name: string; role: Role }[];
      return rows.map((r) => ({ id: r.id, name: r.name, role: r.role }));
    },
    /** Locks the team's admin rows so two concurrent demotions cannot both see "another admin remains". */
    async lockAdmins(teamId: number): Promise<number[]> {
      const rows = (await db('memberships')
        .where({ team_id: teamId, role: 'admin' })
        .forUpdate()
        .select('user_id')) as { user_id: number }[];
      return rows.map((r) => r.user_id);
    },
    async updateRole(teamId: number, userId: number, role: Role): Promise<void> {
      await db('memberships').where({ team_id: teamId, user_id: userId }).update({ role });
    },
    async remove(teamId: number, userId: number): Promise<void> {
      await db('memberships').where({ team_id: teamId, user_id: userId }).delete();
    },
    async listEmails(teamId: number): Promise<string[]> {
      const rows = (await db('memberships as m')
        .join('users as u', 'u.id', 'm.user_id')
        .where('m.team_id', teamId)
        .select('u.email')) as { email: string }[];
      return rows.map((r) => r.email);
    },
  };
}

export type MembershipsRepository = ReturnType<typeof membershipsRepository>;
