import { randomBytes } from 'node:crypto';
import knexFactory, { type Knex } from 'knex';
import { buildKnexConfig, type DbSettings } from '../../server/db/knex-config';

export interface TestDatabase {
  name: string;
  knex: Knex;
  config: DbSettings;
  destroy(): Promise<void>;
}

export function testDbSettings(database = ''): DbSettings {
  return {
    host: process.env.DB_HOST || '127.0.0.1',
    port: Number(process.env.DB_PORT || 3407),
    user: process.env.DB_USER || 'cellwright',
    password: process.env.DB_PASSWORD ?? 'cellwright-dev',
    database,
  };
}

/** A server connection with no default database, for CREATE/DROP DATABASE. */
function adminKnex(): Knex {
  const config = buildKnexConfig(testDbSettings(), { min: 0, max: 1 });
  const connection = { ...(config.connection as object) } as Record<string, unknown>;
  delete connection.database;
  return knexFactory({ ...config, connection });
}

/** An empty database named cellwright_t_<hex>; migrated unless { migrate: false }. */
export async function createTestDatabase(opts: { migrate?: boolean } = {}): Promise<TestDatabase> {
  const name = `cellwright_t_${randomBytes(6).toString('hex')}`;
  const admin = adminKnex();
  try {
    await admin.raw(`CREATE DATABASE \`${name}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
  } finally {
    await admin.destroy();
  }
  const config = testDbSettings(name);
  const knex = knexFactory(buildKnexConfig(config, { min: 0, max: 5 }));
  let destroyed = false;
  const destroy = async () => {
    if (destroyed) return;
    destroyed = true;
    await knex.destroy().catch(() => undefined);
    await dropDatabase(name);
  };
  try {
    if (opts.migrate !== false) await knex.migrate.latest();
  } catch (err) {
    await destroy();
    throw err;
  }
  return { name, knex, config, destroy };
}

export async function dropDatabase(name: string): Promise<void> {
  if (!/^cellwright_[a-z0-9_]+$/.test(name)) throw new Error(`refusing to drop ${name}`);
  const admin = adminKnex();
  try {
    await admin.raw(`DROP DATABASE IF EXISTS \`${name}\``);
  } finally {
    await admin.destroy();
  }
}
