import knexFactory from 'knex';
import { buildKnexConfig, type DbSettings } from './knex-config';

export interface MigrationStatus {
  applied: string[];
  pending: string[];
}

/** Migration commands for scripts: each opens its own one-connection pool and closes it again. */
export async function withMigrator<T>(
  settings: DbSettings,
  fn: (m: {
    latest(): Promise<string[]>;
    rollback(all: boolean): Promise<string[]>;
    status(): Promise<MigrationStatus>;
  }) => Promise<T>,
): Promise<T> {
  const knex = knexFactory(buildKnexConfig(settings, { min: 0, max: 1 }));
  const name = (m: unknown) =>
    typeof m === 'string' ? m : ((m as { name?: string; file?: string }).name ?? (m as { file?: string }).file ?? String(m));
  try {
    return await fn({
      async latest() {
        const [, applied] = (await knex.migrate.latest()) as [number, string[]];
        return applied;
      },
      async rollback(all) {
        const [, undone] = (await knex.migrate.rollback(undefined, all)) as [number, string[]];
        return undone;
      },
      async status() {
        const [done, pending] = (await knex.migrate.list()) as [unknown[], unknown[]];
        return { applied: done.map(name), pending: pending.map(name) };
      },
    });
  } finally {
    await knex.destroy();
  }
}
