// The "nothing changed" checks of the hostile-input and access tests are only as good as the snapshot they
// compare: these show it sees each kind of change, and ignores only what it is told to.
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../helpers/db';
import { snapshotDiff, snapshotter, type Snapshotter } from '../helpers/snapshot';

let db: TestDatabase;
let dataDir: string;
beforeAll(async () => {
  db = await createTestDatabase({ migrate: false });
  dataDir = mkdtempSync(path.join(tmpdir(), 'cellwright-snapshot-'));
});
afterAll(async () => {
  await db?.destroy();
  rmSync(dataDir, { recursive: true, force: true });
});

const rows = [
  { id: 1, name: 'reef', note: null, blob: Buffer.from([0, 1, 2]), doc: '{"k":1}', at: '2026-01-01 00:00:00.001', score: 0.1 },
  { id: 2, name: 'kelp', note: 'NULL', blob: Buffer.from([3]), doc: '[]', at: '2026-01-02 00:00:00.000', score: 0.30000000000000004 },
  { id: 3, name: 'sand', note: '', blob: Buffer.alloc(0), doc: '{}', at: '2026-01-03 00:00:00.000', score: -0 },
];

async function reset(order: number[] = [0, 1, 2]): Promise<void> {
  const knex = db.knex;
  await knex.schema.dropTableIfExists('sample');
  await knex.schema.dropTableIfExists('pairs');
  await knex.schema.createTable('sample', (t) => {
    t.integer('id').primary();
    t.string('name', 40).notNullable();
    t.text('note').nullable();
    t.specificType('blob', 'LONGBLOB').notNullable();
    t.json('doc').notNullable();
    t.datetime('at', { precision: 3 }).notNullable();
    t.double('score').notNullable();
    t.datetime('seen_at', { precision: 3 }).nullable();
  });
  // A composite key and no surrogate id, like outbox_recipients.
  await knex.schema.createTable('pairs', (t) => {
    t.integer('a').notNullable();
    t.string('b', 40).notNullable();
    t.primary(['a', 'b']);
  });
  for (const i of order) await knex('sample').insert(rows[i]);
  await knex('pairs').insert([{ a: 1, b: 'x' }, { a: 2, b: 'y' }]);
  rmSync(path.join(dataDir, 'objects'), { recursive: true, force: true });
  mkdirSync(path.join(dataDir, 'objects', 'ab'), { recursive: true });
  writeFileSync(path.join(dataDir, 'objects', 'ab', 'ab01'), 'bytes');
}

const open = (volatileColumns: string[] = []) => snapshotter({ knex: db.knex, database: db.name, dataDir, volatileColumns });
type Depth = 'take' | 'fingerprint';
const depths: Depth[] = ['take', 'fingerprint'];

describe.each(depths)('a %s of the database and the store', (depth) => {
  let s: Snapshotter;
  const snap = () => s[depth]();
  beforeEach(async () => {
    await reset();
    s = await open();
  });

  it('is the same for the same rows inserted in another order', async () => {
    const before = await snap();
    await reset([2, 0, 1]);
    expect(snapshotDiff(before, await snap())).toEqual([]);
  });

  it.each([
    ['a string', { name: 'reef!' }],
    ['NULL into the text NULL', { note: 'NULL' }],
    ['one byte of a BLOB', { blob: Buffer.from([0, 1, 3]) }],
    ['a JSON document', { doc: '{"k":2}' }],
    ['a millisecond', { at: '2026-01-01 00:00:00.002' }],
    ['the last bit of a double', { score: 0.1 + Number.EPSILON / 8 }],
  ])('sees %s change in one row', async (_what, change) => {
    const before = await snap();
    await db.knex('sample').where({ id: 1 }).update(change);
    expect(snapshotDiff(before, await snap())).toEqual([depth === 'take' ? 'sample: changed row 1' : 'sample: contents changed (CHECKSUM TABLE)']);
  });

  it('sees two rows swap a value', async () => {
    const before = await snap();
    await db.knex('sample').where({ id: 1 }).update({ name: 'kelp' });
    await db.knex('sample').where({ id: 2 }).update({ name: 'reef' });
    expect(snapshotDiff(before, await snap())).toEqual([depth === 'take' ? 'sample: changed row 1, 2' : 'sample: contents changed (CHECKSUM TABLE)']);
  });

  it('sees a row added and one removed, by composite key', async () => {
    const before = await snap();
    await db.knex('pairs').where({ a: 1, b: 'x' }).delete();
    await db.knex('pairs').insert({ a: 3, b: 'z' });
    expect(snapshotDiff(before, await snap())).toEqual([depth === 'take' ? 'pairs: added row 3/z; removed row 1/x' : 'pairs: contents changed (CHECKSUM TABLE)']);
  });

  it('sees a file put in the store and one taken out, but not a temporary one', async () => {
    const before = await snap();
    writeFileSync(path.join(dataDir, 'objects', 'ab', 'ab02'), 'more');
    writeFileSync(path.join(dataDir, 'objects', 'ab', '.tmp-123-abc'), 'partial');
    rmSync(path.join(dataDir, 'objects', 'ab', 'ab01'));
    expect(snapshotDiff(before, await snap())).toEqual(['file objects/ab/ab02: added', 'file objects/ab/ab01: removed']);
  });
});

describe('volatile columns', () => {
  it('are left out of both depths, and everything else in their table is still compared', async () => {
    await reset();
    const s = await open(['sample.seen_at']);
    const [taken, printed] = [await s.take(), await s.fingerprint()];
    await db.knex('sample').where({ id: 1 }).update({ seen_at: '2026-02-01 00:00:00.000' });
    expect(snapshotDiff(taken, await s.take())).toEqual([]);
    expect(snapshotDiff(printed, await s.fingerprint())).toEqual([]);
    await db.knex('sample').where({ id: 2 }).update({ name: 'weed' });
    expect(snapshotDiff(taken, await s.take())).toEqual(['sample: changed row 2']);
    expect(snapshotDiff(printed, await s.fingerprint())).toEqual(['sample: changed row 2']);
  });

  it('may be a whole table, which is then not compared at all', async () => {
    await reset();
    const s = await open(['pairs.*']);
    const [taken, printed] = [await s.take(), await s.fingerprint()];
    await db.knex('pairs').insert({ a: 9, b: 'w' });
    expect(snapshotDiff(taken, await s.take())).toEqual([]);
    expect(snapshotDiff(printed, await s.fingerprint())).toEqual([]);
    await db.knex('sample').where({ id: 3 }).delete();
    expect(snapshotDiff(taken, await s.take())).toEqual(['sample: removed row 3']);
  });

  it('must exist, so a renamed column cannot silently widen the exclusion', async () => {
    await reset();
    await expect(open(['sample.last_seen'])).rejects.toThrow(/sample.last_seen/);
  });
});
