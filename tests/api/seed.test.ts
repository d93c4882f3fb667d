import bcrypt from 'bcryptjs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { isLoopbackHost } from '../../server/config';
import { wrapKnex } from '../../server/db';
import { demoAccounts, demoTeamName, replacePublishedDemoPasswords, seedDemo } from '../../server/seed/demo';
import { createTestDatabase, type TestDatabase } from '../helpers/db';

const hashPassword = (p: string) => bcrypt.hash(p, 10);

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db?.destroy();
});

async function accountRows(knex: TestDatabase['knex']) {
  return (await knex('memberships as m')
    .join('users as u', 'u.id', 'm.user_id')
    .orderBy('u.email')
    .select('u.email', 'u.name', 'm.role', 'u.password_hash', 'u.token_version')) as { email: string; name: string; role: string; password_hash: string; token_version: number }[];
}

describe('demo seed', () => {
  it('creates the invented team with an admin, an engineer and a viewer, and changes nothing when run again', async () => {
    const database = wrapKnex(db.knex);
    const first = await seedDemo(database, { bindHost: '127.0.0.1', hashPassword });
    expect(first).toMatchObject({ created: 3, passwords: [] });
    const second = await seedDemo(database, { bindHost: '127.0.0.1', hashPassword });
    expect(second).toEqual({ teamId: first.teamId, created: 0, passwords: [] });

    const teams = await db.knex('teams').select('name');
    expect(teams).toEqual([{ name: demoTeamName }]);
    const rows = await accountRows(db.knex);
    expect(rows.map(({ email, name, role }) => ({ email, name, role }))).toEqual([
      { email: 'ada@bramblecove.test', name: 'Ada Ferrow', role: 'admin' },
      { email: 'juno@bramblecove.test', name: 'Juno Marsh', role: 'viewer' },
      { email: 'tomas@bramblecove.test', name: 'Tomas Reyl', role: 'engineer' },
    ]);
    for (const row of rows) {
      const account = demoAccounts.find((a) => a.email === row.email)!;
      expect(await bcrypt.compare(account.password, row.password_hash)).toBe(true);
    }
  });

  it('gives the published passwords only on loopback, and random ones, returned once, to a studio bound elsewhere', async () => {
    for (const bindHost of ['0.0.0.0', '192.0.2.10']) {
      const exposed = await createTestDatabase();
      try {
        const seeded = await seedDemo(wrapKnex(exposed.knex), { bindHost, hashPassword });
        expect(seeded.created).toBe(3);
        expect(seeded.passwords.map((p) => p.email).sort()).toEqual(demoAccounts.map((a) => a.email).sort());
        expect(new Set(seeded.passwords.map((p) => p.password)).size).toBe(3);
        const rows = await accountRows(exposed.knex);
        for (const given of seeded.passwords) {
          // 15 random bytes in base64url: 20 characters.
          expect(given.password).toMatch(/^[A-Za-z0-9_-]{20}$/);
          const row = rows.find((r) => r.email === given.email)!;
          expect(row.role).toBe(given.role);
          expect(await bcrypt.compare(given.password, row.password_hash)).toBe(true);
          expect(await bcrypt.compare(demoAccounts.find((a) => a.email === given.email)!.password, row.password_hash)).toBe(false);
        }
      } finally {
        await exposed.destroy();
      }
    }
  });

  it('replaces published passwords left from a loopback start once the studio is bound elsewhere, ending their sessions', async () => {
    const database = wrapKnex(db.knex);
    expect(await replacePublishedDemoPasswords(database, { bindHost: 'localhost', hashPassword })).toEqual([]);
    const before = await accountRows(db.knex);
    const replaced = await replacePublishedDemoPasswords(database, { bindHost: '0.0.0.0', hashPassword });
    expect(replaced.map((p) => p.email).sort()).toEqual(demoAccounts.map((a) => a.email).sort());
    const after = await accountRows(db.knex);
    for (const given of replaced) {
      const row = after.find((r) => r.email === given.email)!;
      expect(await bcrypt.compare(given.password, row.password_hash)).toBe(true);
      expect(row.token_version).toBe(before.find((r) => r.email === given.email)!.token_version + 1);
    }
    // Nothing published is left, so a second start replaces nothing.
    expect(await replacePublishedDemoPasswords(database, { bindHost: '0.0.0.0', hashPassword })).toEqual([]);
  });

  it('counts 127.0.0.0/8, ::1 and localhost as loopback, and nothing else', () => {
    const loopback = ['127.0.0.1', '127.45.6.7', '::1', '0:0:0:0:0:0:0:1', '::ffff:127.0.0.1', 'localhost', 'LocalHost', 'localhost.'];
    const exposed = ['0.0.0.0', '::', '128.0.0.1', '10.0.0.1', '192.168.1.20', '::ffff:10.0.0.1', 'fe80::1', 'localhost.example.test', 'studio', ''];
    expect(loopback.filter((h) => !isLoopbackHost(h))).toEqual([]);
    expect(exposed.filter((h) => isLoopbackHost(h))).toEqual([]);
  });
});
