import { execFile } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import knexFactory from 'knex';
import { buildKnexConfig } from '../../server/db/knex-config';
import type { TestDatabase } from './db';
import { getFreePort } from './ports';

const run = promisify(execFile);
const repoRoot = fileURLToPath(new URL('../..', import.meta.url));

/**
 * A MariaDB server of a test's own, started by the project's own scripts/db.sh on a free port and a temporary
 * directory, for tests that stop and start the database under a running studio.
 */
export interface PrivateMariaDb {
  database: TestDatabase;
  stop(): Promise<void>;
  start(): Promise<void>;
}

export async function startPrivateMariaDb(): Promise<PrivateMariaDb> {
  const port = await getFreePort();
  // A short path: the server's Unix socket lives in it (scripts/db.sh falls back to /tmp past ~96 characters).
  const dir = mkdtempSync(path.join(tmpdir(), 'cw-db-'));
  const name = 'cellwright_private';
  const env = { ...process.env, DB_DIR: dir, DB_PORT: String(port), DB_HOST: '127.0.0.1', DB_NAME: name, DB_USER: 'cellwright', DB_PASSWORD: 'cellwright-dev' };
  const script = (command: 'start' | 'stop') => run('bash', ['scripts/db.sh', command], { cwd: repoRoot, env, timeout: 120_000 });
  await script('start');
  const config = { host: '127.0.0.1', port, user: 'cellwright', password: 'cellwright-dev', database: name };
  const knex = knexFactory(buildKnexConfig(config, { min: 0, max: 5 }));
  let destroyed = false;
  return {
    database: {
      name,
      knex,
      config,
      async destroy() {
        if (destroyed) return;
        destroyed = true;
        await knex.destroy().catch(() => undefined);
        await script('stop').catch(() => undefined);
        rmSync(dir, { recursive: true, force: true });
      },
    },
    stop: async () => void (await script('stop')),
    start: async () => void (await script('start')),
  };
}
