// A codebook written before the trace and usage were stored once comes out of the migration with each piece in one
// place and its list figures in columns; rolling back puts the old metadata document back as it was.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { migrationSource } from '../../server/db/knex-config';
import { createTestDatabase, type TestDatabase } from '../helpers/db';

const firstOfMine = '20260701000100-add-codebook-distortion-and-iterations.ts';

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase({ migrate: false });
});
afterAll(async () => {
  await db?.destroy();
});

const trace = [
  { size: 1, iteration: 0, distortion: 40.5, emptyRepaired: 0, elapsedMs: 0.5 },
  { size: 2, iteration: 0, distortion: 20.25, emptyRepaired: 1, elapsedMs: 0.75, redecided: 2 },
];
// The export document without codewords, as the first codebook migration stored it (usage and trace included).
const oldMetadata = {
  format: 'cellwright-codebook',
  version: 1,
  bits: 1,
  size: 2,
  dimension: 4,
  patch: { width: 2, height: 2, channels: 1, color: 'luma' },
  preprocessing: { kind: 'none' },
  usage: [3, 9],
  training: { source: 'old corpus', vectorCount: 12, init: 'split', epsilon: 0.0001, seed: 1, iterations: 7, distortion: 0.1 + 0.2, trace, maxIterations: 100 },
  checksum: 'a'.repeat(64),
};

const json = (v: unknown) => (typeof v === 'string' ? JSON.parse(v) : v);

describe('storing a codebook once', () => {
  it('moves usage and trace out of the metadata, fills the list columns, and rolls back to the old document', async () => {
    const names = (await migrationSource.getMigrations([])).filter((name) => name < firstOfMine);
    for (const name of names) await db.knex.migrate.up({ name });
    const [teamId] = await db.knex('teams').insert({ name: 'Migrated' });
    const [id] = await db.knex('codebooks').insert({
      team_id: teamId, run_id: null, bits: 1, size: 2, dimension: 4, patch_width: 2, patch_height: 2, channels: 1, color: 'luma',
      mean_bits: 0, codewords: Buffer.alloc(2 * 4 * 4), usage: JSON.stringify(oldMetadata.usage), cell_distortion: null,
      trace: JSON.stringify(trace), metadata: JSON.stringify(oldMetadata), checksum: oldMetadata.checksum, source: 'imported', name: 'old',
    });

    await db.knex.migrate.latest();
    const row = await db.knex('codebooks').where({ id }).first();
    const { usage: _usage, training: { trace: _trace, ...training }, ...rest } = oldMetadata;
    expect(json(row.metadata)).toEqual({ ...rest, training });
    expect(json(row.trace)).toEqual(trace);
    expect(json(row.usage)).toEqual(oldMetadata.usage);
    expect({ distortion: row.distortion, iterations: row.iterations }).toEqual({ distortion: 0.1 + 0.2, iterations: 7 });

    const mine = (await migrationSource.getMigrations([])).filter((name) => name >= firstOfMine);
    for (let i = 0; i < mine.length; i += 1) await db.knex.migrate.down();
    const back = await db.knex('codebooks').where({ id }).first();
    expect(json(back.metadata)).toEqual(oldMetadata);
    expect(back).not.toHaveProperty('distortion');
  });
});
