import { iso } from '../rows';
import { insertedId, type Executor } from './executor';

export interface TeamRecord {
  id: number;
  name: string;
  createdAt: string;
}

interface TeamRow {
  id: number;
  name: string;
  created_at: Date;
}

const toTeam = (r: TeamRow): TeamRecord => ({ id: r.id, name: r.name, createdAt: iso(r.created_at) });

export function teamsRepository(db: Executor) {
  return {
    async create(name: string): Promise<TeamRecord> {
      const id = insertedId(await db('teams').insert({ name }));
      return toTeam((await db<TeamRow>('teams').where({ id }).first())!);
    },
    async findById(id: number): Promise<TeamRecord | null> {
      const row = await db<TeamRow>('teams').where({ id }).first();
      return row ? toTeam(row) : null;
    },
    async findByName(name: string): Promise<TeamRecord | null> {
      const row = await db<TeamRow>('teams').where({ name }).orderBy('id').first();
      return row ? toTeam(row) : null;
    },
  };
}

export type TeamsRepository = ReturnType<typeof teamsRepository>;
