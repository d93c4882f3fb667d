import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../helpers/db';

// The platform's tables; later migrations add more, which this test neither needs nor forbids.
const platformTables = [
  'audit_log',
  'invitations',
  'memberships',
  'outbox_messages',
  'outbox_recipients',
  'password_resets',
  'teams',
  'users',
];

let db: TestDatabase;

beforeAll(async () => {
  db = await createTestDatabase({ migrate: false });
});
afterAll(async () => {
  await db?.destroy();
});

async function tables(): Promise<{ name: string; engine: string; collation: string }[]> {
  const [rows] = (await db.knex.raw(
    `SELECT TABLE_NAME AS name, ENGINE AS engine, TABLE_COLLATION AS collation
       FROM information_schema.TABLES WHERE TABLE_SCHEMA = ? ORDER BY TABLE_NAME`,
    [db.name],
  )) as [{ name: string; engine: string; collation: string }[]];
  return rows.filter((r) => !r.name.startsWith('knex_'));
}

async function foreignKeys(): Promise<{ table: string; column: string; refTable: string; onDelete: string }[]> {
  const [rows] = (await db.knex.raw(
    `SELECT k.TABLE_NAME AS \`table\`, k.COLUMN_NAME AS \`column\`, k.REFERENCED_TABLE_NAME AS refTable, r.DELETE_RULE AS onDelete
       FROM information_schema.KEY_COLUMN_USAGE k
       JOIN information_schema.REFERENTIAL_CONSTRAINTS r
         ON r.CONSTRAINT_SCHEMA = k.TABLE_SCHEMA AND r.CONSTRAINT_NAME = k.CONSTRAINT_NAME
      WHERE k.TABLE_SCHEMA = ? AND k.REFERENCED_TABLE_NAME IS NOT NULL`,
    [db.name],
  )) as [{ table: string; column: string; refTable: string; onDelete: string }[]];
  return rows;
}

describe('migrations', () => {
  it('create every table as InnoDB utf8mb4, roll back to an empty schema, and apply again to the same tables', async () => {
    await db.knex.migrate.latest();
    const first = await tables();
    expect(first.map((t) => t.name)).toEqual(expect.arrayContaining(platformTables));
    for (const t of first) {
      expect(t.engine).toBe('InnoDB');
      expect(t.collation).toMatch(/^utf8mb4_/);
    }

    await db.knex.migrate.rollback(undefined, true);
    expect(await tables()).toEqual([]);

    await db.knex.migrate.latest();
    expect((await tables()).map((t) => t.name)).toEqual(first.map((t) => t.name));
    const [, pending] = (await db.knex.migrate.list()) as [unknown[], unknown[]];
    expect(pending).toHaveLength(0);
  });

  it('declares the foreign keys with the delete rules the data model relies on', async () => {
    const fks = await foreignKeys();
    const rule = (table: string, column: string) => fks.find((f) => f.table === table && f.column === column)?.onDelete;
    expect(rule('memberships', 'team_id')).toBe('CASCADE');
    expect(rule('memberships', 'user_id')).toBe('CASCADE');
    expect(rule('invitations', 'team_id')).toBe('CASCADE');
    expect(rule('invitations', 'invited_by')).toBe('SET NULL');
    expect(rule('password_resets', 'user_id')).toBe('CASCADE');
    expect(rule('audit_log', 'team_id')).toBe('SET NULL');
    expect(rule('audit_log', 'actor_user_id')).toBe('SET NULL');
    expect(rule('outbox_recipients', 'message_id')).toBe('CASCADE');
    // A user's sessions go with the user; a team's queued mail with the team (account mail has no team).
    expect(rule('sessions', 'user_id')).toBe('CASCADE');
    expect(rule('mail_queue', 'team_id')).toBe('CASCADE');
  });

  it('keeps e-mail addresses and one-time token hashes unique', async () => {
    const [rows] = (await db.knex.raw(
      `SELECT TABLE_NAME AS t, COLUMN_NAME AS c FROM information_schema.STATISTICS
        WHERE TABLE_SCHEMA = ? AND NON_UNIQUE = 0 AND INDEX_NAME <> 'PRIMARY'`,
      [db.name],
    )) as [{ t: string; c: string }[]];
    const unique = rows.map((r) => `${r.t}.${r.c}`);
    expect(unique).toEqual(
      expect.arrayContaining([
        'users.email',
        'invitations.token_hash',
        'password_resets.token_hash',
        'signup_links.token_hash',
        'memberships.team_id',
        'memberships.user_id',
      ]),
    );
  });
});
