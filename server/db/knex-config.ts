import { readdirSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import type { Knex } from 'knex';

export interface DbSettings {
  host: string;
  port: number;
  user: string;
  password: string;
  database: string;
}

export const migrationsDirectory = fileURLToPath(new URL('../../migrations', import.meta.url));

// A timestamp, optionally with a letter after its date: work prepared side by side on one day takes a letter each
// (20261205a…), which sorts after that day's plain timestamps and before the next day's.
const migrationFile = /^\d{8}[a-z]?\d{6}-[a-z0-9-]+\.ts$/;

/**
 * Loads migrations with our own dynamic import rather than knex's, so the same list works under tsx,
 * under vitest's module runner and from scripts/migrate.ts; names keep the file name knex records.
 */
export const migrationSource: Knex.MigrationSource<string> = {
  async getMigrations() {
    return readdirSync(migrationsDirectory)
      .filter((f) => migrationFile.test(f))
      .sort();
  },
  getMigrationName(migration) {
    return migration;
  },
  async getMigration(migration) {
    const mod = (await import(pathToFileURL(path.join(migrationsDirectory, migration)).href)) as Knex.Migration;
    return mod;
  },
};

/** One knex configuration for the server, the migration script, knexfile.ts and the test helpers. */
export interface KnexLog {
  warn(message: unknown): void;
  error(message: unknown): void;
}

export function buildKnexConfig(
  settings: DbSettings,
  pool: { min?: number; max?: number } = {},
  log?: KnexLog,
): Knex.Config {
  return {
    // Knex otherwise prints pool warnings straight to the console, outside the structured log.
    log: {
      warn: (m: unknown) => log?.warn(m),
      error: (m: unknown) => log?.error(m),
      deprecate: (m: unknown) => log?.warn(m),
      debug: () => undefined,
    },
    client: 'mysql2',
    connection: {
      host: settings.host,
      port: settings.port,
      user: settings.user,
      password: settings.password,
      database: settings.database,
      charset: 'utf8mb4',
      // Instants are stored in UTC and come back as Date objects, never as local-time strings.
      timezone: 'Z',
      dateStrings: false,
      supportBigNumbers: true,
      bigNumberStrings: false,
      connectTimeout: 5_000,
    },
    pool: {
      min: pool.min ?? 0,
      max: pool.max ?? 10,
      afterCreate(conn: { query: (sql: string, cb: (err: Error | null) => void) => void }, done: (err: Error | null, conn: unknown) => void) {
        // CURRENT_TIMESTAMP defaults must agree with the UTC instants the driver writes.
        conn.query("SET time_zone = '+00:00'", (err) => done(err, conn));
      },
    },
    // A request should fail fast with 503 rather than hang when the database is gone.
    acquireConnectionTimeout: 5_000,
    migrations: { migrationSource, tableName: 'knex_migrations' },
  };
}
