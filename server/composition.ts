import { hostname } from 'node:os';
import { appVersion, createLogger, workerToken, type Config, type Logger } from './config';
import { createDatabase, type Database } from './db';
import {
  createAccountsService,
  createApiSchemasService,
  createCodebooksService,
  createComparisonService,
  createReleasesService,
  createReleaseReportService,
  createActivityService,
  createEvaluationService,
  createHealthService,
  createImageRecordsService,
  createImageSetsService,
  createImageUploadsService,
  createInvitationsService,
  createLoginThrottle,
  createMailSender,
  createMailTransport,
  createOutboxService,
  createReconstructionsService,
  createCodebookModelService,
  createCodebookChannelService,
  createPasswordHasher,
  createRunsService,
  createSessionTokens,
  createStoreSweeper,
  createTeamsService,
  createWorkersService,
  type MailSender,
  type PasswordHasher,
  type StoreSweeper,
} from './services';
import { createContentStore, type ContentStore } from './storage/content-store';
import { createSpool } from './storage/spool';
import { createJobEventBus, type JobEventBus } from './jobs/events';
import { jobHandlers } from './jobs/handlers';
import { evaluationTaskRunner } from './jobs/evaluation-tasks';
import { channelTaskRunner } from './jobs/channel-tasks';
import { createComputeClient } from './jobs/compute/client';
import { executeComputeTask, loadTrainingSample } from './jobs/compute/execute';
import { createComputeWorker } from './jobs/compute/worker';
import { createWorkerRegistry } from './jobs/compute/registry';
import { createJobDispatch } from './jobs/dispatch';
import { createJobStore } from './jobs/job-store';
import { createJobNotifier } from './jobs/notifications';
import { createTaskPool, type TaskPool } from './jobs/pool';
import type { JobStore } from './jobs/queue';
import type { JobDeps } from './jobs/types';
import { createJobRunner, type JobRunner } from './jobs/runner';
import { channelQuery } from './contracts';
import { threadBudget } from './engine';
import type { AppDeps } from './app';

export interface Composition extends AppDeps {
  db: Database;
  /** Originals and thumbnails under DATA_DIR, by SHA-256; jobs read training and held-out images through it. */
  contentStore: ContentStore;
  /** Frees stored originals no image names any more (scheduled by server/index.ts). */
  storeSweeper: StoreSweeper;
  /** The jobs' rows (written under leases), the event bus, the task pool and the runner (on BullMQ) (started by server/index.ts, or by a test). */
  jobs: { store: JobStore; bus: JobEventBus; pool: TaskPool; runner: JobRunner; deps: JobDeps };
  /** Pool threads of the reconstruction views (RECONSTRUCTION_MAX_CONCURRENT), apart from the jobs' so neither waits for the other. */
  reconstructionPool: TaskPool;
  /** Delivers queued mail after commit (started by server/index.ts, or by a test). */
  mail: MailSender;
  /** Stops the runner, the sweep and the mail sender, then closes the pools, the SMTP transport and the database. */
  close(): Promise<void>;
}

export interface ComposeOptions {
  logger?: Logger;
  db?: Database;
  /** The clock of sessions, one-time links, sign-in backoff and mail retries (tests move it by hand). */
  now?: () => Date;
  /** Password hashing (tests wrap it to see when it runs). */
  passwords?: PasswordHasher;
}

/** Builds every repository and service once; the app, the seed and the tests share these instances. */
export function compose(config: Config, options: ComposeOptions = {}): Composition {
  const logger = options.logger ?? createLogger(config.logLevel);
  const now = options.now ?? (() => new Date());
  // One thread budget for everything the engine runs in this process, sized once from ENGINE_THREADS.
  threadBudget.configure(config.engineThreads);
  const db =
    options.db ??
    createDatabase(config.db, undefined, {
      warn: (m) => logger.warn({ knex: String(m) }, 'database warning'),
      error: (m) => logger.error({ knex: String(m) }, 'database error'),
    });
  const sessions = createSessionTokens(config.jwt);
  const transport = createMailTransport(config);
  const mail = createMailSender({ db, transport, logger, now, ...config.mailQueue });
  const accounts = createAccountsService({
    db,
    sessions,
    mail,
    passwords: options.passwords ?? createPasswordHasher(config.bcryptCost),
    throttle: createLoginThrottle({ ...config.loginBackoff, now }),
    logger,
    publicUrl: config.publicUrl,
    now,
  });
  const teams = createTeamsService({ db });
  const invitations = createInvitationsService({ db, mail, accounts, publicUrl: config.publicUrl, now });
  const outbox = createOutboxService({ db });
  const health = createHealthService({ db, version: appVersion() });
  const apiSchemas = createApiSchemasService({ publicUrl: config.publicUrl, version: appVersion() });
  const contentStore = createContentStore(config.dataDir);
  const imageSets = createImageSetsService({ db });
  const imageRecords = createImageRecordsService({ db, store: contentStore });
  const spool = createSpool(config.dataDir);
  const imageUploads = createImageUploadsService({ db, store: contentStore, spool, limits: config.uploads });
  const bus = createJobEventBus();
  const jobStore = createJobStore(db, { logger });
  const pool = createTaskPool({ maxThreads: config.jobConcurrency, maxHeapMb: config.jobTaskMaxHeapMb });
  const training = { maxBytes: config.trainingMaxBytes, engineThreads: config.engineThreads };
  const computeKeyPrefix = `cw:${config.db.database}`;
  const compute = createComputeClient({ redisUrl: config.redis.url, prefix: computeKeyPrefix, logger });
  const jobDeps: JobDeps = { db, store: contentStore, compute, bus, logger, training };
  // The studio's own worker reads originals straight from its content store; a worker that joined fetches them.
  const localWorker = () =>
    createComputeWorker({
      redisUrl: config.redis.url,
      prefix: computeKeyPrefix,
      identity: { workerId: `${hostname()}-${process.pid}-studio`, host: hostname(), threads: config.engineThreads },
      leaseMs: config.jobQueue.leaseMs,
      logger,
      execute: (task, ctx) => executeComputeTask(task, { ...ctx, pool, resolveImage: async (image) => contentStore.path(image.sha256) }),
      loadSample: (sample, signal) => loadTrainingSample(sample, { pool, signal, resolveImage: async (image) => contentStore.path(image.sha256) }),
    });
  const runner = createJobRunner({
    store: jobStore,
    // One studio is one database: its name keeps the queues of studios (and test databases) sharing a Redis apart.
    dispatch: () =>
      createJobDispatch({
        redisUrl: config.redis.url,
        prefix: computeKeyPrefix,
        leaseMs: config.jobQueue.leaseMs,
        concurrency: config.jobConcurrency,
        logger,
      }),
    reconcileMs: config.jobQueue.reconcileMs,
    localWorker: config.workerInServer ? localWorker : undefined,
    bus,
    handlers: jobHandlers,
    logger,
    deps: jobDeps,
    onFinished: createJobNotifier({ db, mail, publicUrl: config.publicUrl }),
  });
  const runs = createRunsService({ db, bus, training });
  const codebooks = createCodebooksService({ db });
  const evaluation = createEvaluationService({ db, jobQueued: () => bus.jobQueued(), requestCancel: (jobId) => bus.requestCancel(jobId) });
  const reconstructionPool = createTaskPool({ maxThreads: config.reconstructions.maxConcurrent, maxHeapMb: config.jobTaskMaxHeapMb });
  const reconstructions = createReconstructionsService({
    db,
    store: contentStore,
    runTask: evaluationTaskRunner(reconstructionPool),
    ...config.reconstructions,
  });
  // Anomaly maps and denoising are jobs on the workers (server/jobs/handlers/model.ts); the service queues and reads them.
  const codebookModel = createCodebookModelService({ db, bus });
  // Channel curves and index assignment too: per-request computations of seconds on a codebook.
  const codebookChannel = createCodebookChannelService({ db, store: contentStore, codebooks, runTask: channelTaskRunner(reconstructionPool), ...config.reconstructions });
  const comparison = createComparisonService({ db });
  const releases = createReleasesService({ db, now });
  const releaseReport = createReleaseReportService({
    db, releases, ...config.reconstructions,
    channelCurve: (teamId, codebookId, signal) => codebookChannel.curve(teamId, codebookId, channelQuery.parse({}), signal),
    measureRounding: codebookChannel.measureRounding,
  });
  const activity = createActivityService({ db });
  // The token file is read at each registration: replacing it (npm run worker-token -- rotate) refuses the old one.
  const workerRegistry = createWorkerRegistry({ redisUrl: config.redis.url, prefix: computeKeyPrefix, currentToken: () => workerToken(config, { create: true }) });
  const workers = createWorkersService({
    registry: workerRegistry,
    prefix: computeKeyPrefix,
    leaseMs: config.jobQueue.leaseMs,
    originalPath: async (sha256) => ((await contentStore.has(sha256)) ? contentStore.path(sha256) : null),
    queueDepth: async () => {
      const [jobs, tasks] = await Promise.all([runner.depth(), compute.depth()]);
      return { jobsWaiting: jobs?.waiting ?? 0, jobsRunning: jobs?.active ?? 0, tasksWaiting: tasks.waiting, tasksRunning: tasks.active };
    },
  });
  const storeSweeper = createStoreSweeper({ db, store: contentStore, spool, graceMs: config.storeSweep.graceMs, logger });
  return {
    config,
    logger,
    sessions,
    db,
    contentStore,
    storeSweeper,
    jobs: { store: jobStore, bus, pool, runner, deps: jobDeps },
    reconstructionPool,
    mail,
    services: { accounts, teams, invitations, outbox, health, imageSets, imageRecords, imageUploads, runs, codebooks, evaluation, reconstructions, comparison, workers, apiSchemas, codebookModel, releases, releaseReport, activity, codebookChannel },
    async close() {
      // Running jobs go back to the queue before the pool they write through closes.
      await runner.stop();
      await compute.close();
      await workerRegistry.close();
      await storeSweeper.stop();
      await pool.destroy();
      await reconstructionPool.destroy();
      // Background requests finish writing their rows; mail still queued is sent by the next start.
      await accounts.flush();
      await mail.stop();
      transport.close();
      await db.destroy();
    },
  };
}
