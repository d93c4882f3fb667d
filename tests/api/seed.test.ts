import bcrypt from 'bcryptjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { wrapKnex } from '../../server/db';
import { demoAccounts, demoTeamName, seedDemo } from '../../server/seed/demo';
import { createTestDatabase, type TestDatabase } from '../helpers/db';

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db?.destroy();
});

describe('demo seed', () => {
  it('creates the invented team with an admin, an engineer and a viewer, and changes nothing when run again', async () => {
    const database = wrapKnex(db.knex);
    const hash = (p: string) => bcrypt.hash(p, 10);
    const first = await seedDemo(database, hash);
    expect(first.created).toBe(3);
    const second = await seedDemo(database, hash);
    expect(second).toEqual({ teamId: first.teamId, created: 0 });

    const teams = await db.knex('teams').select('name');
    expect(teams).toEqual([{ name: demoTeamName }]);
    const rows = (await db
      .knex('memberships as m')
      .join('users as u', 'u.id', 'm.user_id')
      .orderBy('u.email')
      .select('u.email', 'u.name', 'm.role', 'u.password_hash')) as { email: string; name: string; role: string; password_hash: string }[];
    expect(rows.map(({ email, name, role }) => ({ email, name, role }))).toEqual([
      { email: 'ada@tidewater.test', name: 'Ada Ferrow', role: 'admin' },
      { email: 'juno@tidewater.test', name: 'Juno Marsh', role: 'viewer' },
      { email: 'tomas@tidewater.test', name: 'Tomas Reyl', role: 'engineer' },
    ]);
    for (const row of rows) {
      const account = demoAccounts.find((a) => a.email === row.email)!;
      expect(await bcrypt.compare(account.password, row.password_hash)).toBe(true);
    }
  });
});
