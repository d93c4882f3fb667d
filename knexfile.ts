// For the knex command line run under tsx (`node --import tsx node_modules/knex/bin/cli.js …`);
// the server and scripts/migrate.ts build the same configuration through server/db.
import type { Knex } from 'knex';
import { buildKnexConfig, migrationsDirectory } from './server/db/knex-config';

const env = process.env;

function fromEnvironment(defaultDatabase: string): Knex.Config {
  const base = buildKnexConfig({
    host: env.DB_HOST || '127.0.0.1',
    port: Number(env.DB_PORT || 3407),
    user: env.DB_USER || 'cellwright',
    password: env.DB_PASSWORD ?? 'cellwright-dev',
    database: env.DB_NAME || defaultDatabase,
  });
  return {
    ...base,
    migrations: { directory: migrationsDirectory, loadExtensions: ['.ts'], extension: 'ts', tableName: 'knex_migrations' },
  };
}

const config: Record<'development' | 'test' | 'production', Knex.Config> = {
  development: fromEnvironment('cellwright'),
  test: fromEnvironment('cellwright_test'),
  production: fromEnvironment('cellwright'),
};

export default config;
