import knexFactory, { type Knex } from 'knex';
import { translateDbError } from './errors';
import { buildKnexConfig, type DbSettings, type KnexLog } from './knex-config';
import { auditRepository } from './repositories/audit';
import { baselinesRepository } from './repositories/baselines';
import { codebooksRepository } from './repositories/codebooks';
import { evaluationsRepository } from './repositories/evaluations';
import type { Executor } from './repositories/executor';
import { imageSetsRepository } from './repositories/image-sets';
import { imagesRepository } from './repositories/images';
import { invitationsRepository } from './repositories/invitations';
import { jobsRepository } from './repositories/jobs';
import { mailQueueRepository } from './repositories/mail-queue';
import { membershipsRepository } from './repositories/memberships';
import { modelResultsRepository } from './repositories/model-results';
import { outboxRepository } from './repositories/outbox';
import { passwordResetsRepository } from './repositories/password-resets';
import { reconstructionsRepository } from './repositories/reconstructions';
import { releasesRepository } from './repositories/releases';
import { runsRepository } from './repositories/runs';
import { sessionsRepository } from './repositories/sessions';
import { signupLinksRepository } from './repositories/signup-links';
import { teamsRepository } from './repositories/teams';
import { usersRepository } from './repositories/users';

function buildRepositories(db: Executor, afterCommit: (callback: () => void) => void) {
  return {
    /**
     * Runs callback once the surrounding transaction has committed (never when it rolls back); outside a
     * transaction each statement commits by itself, so the callback runs at once. Callbacks must not throw:
     * they run after the commit, when the caller's work can no longer be undone.
     */
    afterCommit,
    users: translated(usersRepository(db)),
    sessions: translated(sessionsRepository(db)),
    signupLinks: translated(signupLinksRepository(db)),
    mailQueue: translated(mailQueueRepository(db)),
    teams: translated(teamsRepository(db)),
    memberships: translated(membershipsRepository(db)),
    invitations: translated(invitationsRepository(db)),
    passwordResets: translated(passwordResetsRepository(db)),
    audit: translated(auditRepository(db)),
    outbox: translated(outboxRepository(db)),
    imageSets: translated(imageSetsRepository(db)),
    images: translated(imagesRepository(db)),
    runs: translated(runsRepository(db)),
    jobs: translated(jobsRepository(db)),
    codebooks: translated(codebooksRepository(db)),
    evaluations: translated(evaluationsRepository(db)),
    baselines: translated(baselinesRepository(db)),
    reconstructions: translated(reconstructionsRepository(db)),
    modelResults: translated(modelResultsRepository(db)),
    releases: translated(releasesRepository(db)),
  };
}

export type Repositories = ReturnType<typeof buildRepositories>;

/** Every repository method reports MariaDB failures as AppErrors (duplicate → 409, unreachable → 503). */
function translated<T extends Record<string, unknown>>(repo: T): T {
  const out = {} as Record<string, unknown>;
  for (const [key, value] of Object.entries(repo)) {
    out[key] =
      typeof value === 'function'
        ? async (...args: unknown[]) => {
            try {
              return await (value as (...a: unknown[]) => Promise<unknown>)(...args);
            } catch (err) {
              throw translateDbError(err);
            }
          }
        : value;
  }
  return out as T;
}

export interface Database {
  readonly knex: Knex;
  /** Repositories on the pool: each call is its own statement. */
  readonly repos: Repositories;
  /** Runs fn inside one transaction; it commits when fn resolves and rolls back when it throws. */
  transaction<T>(fn: (repos: Repositories) => Promise<T>): Promise<T>;
  /**
   * Runs fn while this process holds the MariaDB named lock `name` (scoped to this database), waiting
   * up to waitSeconds for it; null, without running fn, when another session holds it that long. The
   * lock goes with its connection, so a process that dies releases it.
   */
  withNamedLock<T>(name: string, waitSeconds: number, fn: () => Promise<T>): Promise<{ value: T } | null>;
  /** True when the database answers within timeoutMs. */
  ping(timeoutMs?: number): Promise<boolean>;
  migrateLatest(): Promise<string[]>;
  destroy(): Promise<void>;
}

export function createDatabase(settings: DbSettings, pool?: { min?: number; max?: number }, log?: KnexLog): Database {
  return wrapKnex(knexFactory(buildKnexConfig(settings, pool, log)));
}

export function wrapKnex(knex: Knex): Database {
  return {
    knex,
    repos: buildRepositories(knex, (callback) => callback()),
    async transaction(fn) {
      const committed: (() => void)[] = [];
      let result;
      try {
        result = await knex.transaction((trx) => fn(buildRepositories(trx, (callback) => committed.push(callback))));
      } catch (err) {
        throw translateDbError(err);
      }
      for (const callback of committed) callback();
      return result;
    },
    async withNamedLock(name, waitSeconds, fn) {
      // Named locks are server-wide; the database name keeps two databases on one server apart.
      const lockName = `${String(knex.client.config.connection?.database ?? '')}:${name}`.slice(-64);
      try {
        // A transaction pins one pooled connection: the lock lives on it and must be released on it.
        return await knex.transaction(async (trx) => {
          const [rows] = (await trx.raw('SELECT GET_LOCK(?, ?) AS got', [lockName, waitSeconds])) as [{ got: number | null }[]];
          if (Number(rows[0]?.got) !== 1) return null;
          try {
            return { value: await fn() };
          } finally {
            await trx.raw('SELECT RELEASE_LOCK(?)', [lockName]);
          }
        });
      } catch (err) {
        throw translateDbError(err);
      }
    },
    async ping(timeoutMs = 2_000) {
      let timer: NodeJS.Timeout | undefined;
      try {
        await Promise.race([
          knex.raw('SELECT 1'),
          new Promise((_, reject) => {
            timer = setTimeout(() => reject(new Error('ping timed out')), timeoutMs);
          }),
        ]);
        return true;
      } catch {
        return false;
      } finally {
        clearTimeout(timer);
      }
    },
    async migrateLatest() {
      const [, applied] = (await knex.migrate.latest()) as [number, string[]];
      return applied;
    },
    async destroy() {
      await knex.destroy();
    },
  };
}
