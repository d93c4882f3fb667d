import { appVersion, createLogger, type Config, type Logger } from './config';
import { createDatabase, type Database } from './db';
import {
  createAccountsService,
  createCodebooksService,
  createComparisonService,
  createEvaluationService,
  createHealthService,
  createImageRecordsService,
  createImageSetsService,
  createImageUploadsService,
  createInvitationsService,
  createMailService,
  createOutboxService,
  createRunsService,
  createSessionTokens,
  createStoreSweeper,
  createTeamsService,
  type StoreSweeper,
} from './services';
import { createContentStore, type ContentStore } from './storage/content-store';
import { createSpool } from './storage/spool';
import { createJobEventBus, type JobEventBus } from './jobs/events';
import { jobHandlers } from './jobs/handlers';
import { evaluationTaskRunner } from './jobs/handlers/evaluate';
import { createMariaDbQueue } from './jobs/mariadb-queue';
import { createJobNotifier } from './jobs/notifications';
import { createTaskPool, type TaskPool } from './jobs/pool';
import type { JobQueue } from './jobs/queue';
import { createJobRunner, type JobRunner } from './jobs/runner';
import { threadBudget } from './engine';
import type { AppDeps } from './app';

export interface Composition extends AppDeps {
  db: Database;
  /** Originals and thumbnails under DATA_DIR, by SHA-256; jobs read training and held-out images through it. */
  contentStore: ContentStore;
  /** Frees stored originals no image names any more (scheduled by server/index.ts). */
  storeSweeper: StoreSweeper;
  /** The durable queue, its in-process event bus, the task pool and the runner (started by server/index.ts, or by a test). */
  jobs: { queue: JobQueue; bus: JobEventBus; pool: TaskPool; runner: JobRunner };
  /** Waits for background mail, then closes SMTP transport and the pool. */
  close(): Promise<void>;
}

/** Builds every repository and service once; the app, the seed and the tests share these instances. */
export function compose(config: Config, options: { logger?: Logger; db?: Database } = {}): Composition {
  const logger = options.logger ?? createLogger(config.logLevel);
  // One thread budget for everything the engine runs in this process, sized once from ENGINE_THREADS.
  threadBudget.configure(config.engineThreads);
  const db =
    options.db ??
    createDatabase(config.db, undefined, {
      warn: (m) => logger.warn({ knex: String(m) }, 'database warning'),
      error: (m) => logger.error({ knex: String(m) }, 'database error'),
    });
  const sessions = createSessionTokens(config.jwt);
  const mail = createMailService(config);
  const accounts = createAccountsService({
    db,
    sessions,
    mail,
    logger,
    bcryptCost: config.bcryptCost,
    publicUrl: config.publicUrl,
  });
  const teams = createTeamsService({ db });
  const invitations = createInvitationsService({ db, mail, sessions, accounts, publicUrl: config.publicUrl });
  const outbox = createOutboxService({ db });
  const health = createHealthService({ db, version: appVersion() });
  const contentStore = createContentStore(config.dataDir);
  const imageSets = createImageSetsService({ db });
  const imageRecords = createImageRecordsService({ db, store: contentStore });
  const spool = createSpool(config.dataDir);
  const imageUploads = createImageUploadsService({ db, store: contentStore, spool, limits: config.uploads });
  const bus = createJobEventBus();
  const queue = createMariaDbQueue(db);
  const pool = createTaskPool({ maxThreads: config.jobConcurrency, maxHeapMb: config.jobTaskMaxHeapMb });
  const runner = createJobRunner({
    queue,
    bus,
    handlers: jobHandlers,
    concurrency: config.jobConcurrency,
    logger,
    deps: { db, store: contentStore, pool, queue, bus, logger },
    onFinished: createJobNotifier({ db, mail, publicUrl: config.publicUrl }),
  });
  const runs = createRunsService({ db, bus });
  const codebooks = createCodebooksService({ db });
  const evaluation = createEvaluationService({ db, store: contentStore, runTask: evaluationTaskRunner(pool), jobQueued: () => bus.jobQueued() });
  const comparison = createComparisonService({ db });
  const storeSweeper = createStoreSweeper({ db, store: contentStore, spool, graceMs: config.storeSweep.graceMs, logger });
  return {
    config,
    logger,
    sessions,
    db,
    contentStore,
    storeSweeper,
    jobs: { queue, bus, pool, runner },
    services: { accounts, teams, invitations, outbox, health, imageSets, imageRecords, imageUploads, runs, codebooks, evaluation, comparison },
    async close() {
      // Running jobs go back to the queue before the pool they write through closes.
      await runner.stop();
      await storeSweeper.stop();
      await pool.destroy();
      await accounts.settle();
      mail.close();
      await db.destroy();
    },
  };
}
