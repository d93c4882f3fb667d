// The only file that listens: configuration, migrations, demo seed, fake SMTP, HTTP; orderly shutdown.
import type { Server } from 'node:http';
import { createApp } from './app';
import { compose } from './composition';
import { endAllEventStreams } from './http/middleware/sse';
import { ConfigError, createLogger, loadConfig, WorkerTokenError, workerToken } from './config';
import { startFakeSmtpServer, type FakeSmtpServer } from './mail/fake-smtp-server';
import { demoPasswordNotice, replacePublishedDemoPasswords, seedDemo } from './seed/demo';
import { demoContentDeps, seedDemoContent } from './seed/demo-content';

async function main(): Promise<void> {
  let config;
  try {
    config = loadConfig(process.env);
    // Workers join with this token: made on the first start (mode 0600), a file open to others refused.
    workerToken(config, { create: true });
  } catch (err) {
    process.stderr.write(`${err instanceof ConfigError || err instanceof WorkerTokenError ? err.message : String(err)}\n`);
    process.exit(2);
  }
  const logger = createLogger(config.logLevel);
  const composition = compose(config, { logger });
  const { db, services } = composition;

  let smtp: FakeSmtpServer | undefined;
  let server: Server | undefined;
  let stopping = false;

  const shutdown = async (signal: string) => {
    if (stopping) return;
    stopping = true;
    logger.info({ signal }, 'shutting down');
    const force = setTimeout(() => {
      logger.error('shutdown took too long; exiting');
      process.exit(1);
    }, 15_000);
    force.unref();
    try {
      if (server) {
        const s = server;
        await new Promise<void>((resolve) => {
          s.close(() => resolve());
          endAllEventStreams();
          s.closeIdleConnections();
          // Long-lived responses (event streams) would hold close() open; cut them after a grace period.
          setTimeout(() => s.closeAllConnections(), 5_000).unref();
        });
      }
      await composition.close();
      if (smtp) await smtp.stop();
      clearTimeout(force);
      process.exit(0);
    } catch (err) {
      logger.error({ err }, 'shutdown failed');
      process.exit(1);
    }
  };
  process.on('SIGINT', () => void shutdown('SIGINT'));
  process.on('SIGTERM', () => void shutdown('SIGTERM'));

  try {
    const applied = await db.migrateLatest();
    if (applied.length > 0) logger.info({ applied }, 'migrations applied');
    const demo = { bindHost: config.host, hashPassword: (p: string) => services.accounts.hashPassword(p) };
    // Published demo passwords only on loopback: an exposed studio (seeded now or earlier) gets random ones.
    const givenPasswords = await replacePublishedDemoPasswords(db, demo);
    let seededTeamId: number | null = null;
    if (config.seedDemo && (await db.repos.users.count()) === 0) {
      const seeded = await seedDemo(db, demo);
      logger.info({ teamId: seeded.teamId, accounts: seeded.created, randomPasswords: seeded.passwords.length > 0 }, 'demo team seeded');
      givenPasswords.push(...seeded.passwords);
      seededTeamId = seeded.teamId;
    }
    if (givenPasswords.length > 0) {
      // Straight to stderr, never through the logger: the JSON log on stdout is what gets shipped and kept.
      process.stderr.write(demoPasswordNotice(givenPasswords, config.host));
      logger.warn({ accounts: givenPasswords.map((p) => p.email) }, 'demo accounts got random passwords, printed once on stderr');
    }
    if (seededTeamId !== null) {
      // The sample sweep is a convenience: if it cannot be made, the accounts still work and the server still starts.
      await seedDemoContent(demoContentDeps(composition), seededTeamId).catch((err: unknown) => logger.error({ err }, 'demo content could not be seeded'));
    }
    if (config.smtp.fake) {
      if (config.nodeEnv === 'production') {
        logger.warn(
          'FAKE_SMTP is on: mail is captured in the database, not delivered (the operator reads it with `npm run mail`); set FAKE_SMTP=false and SMTP_HOST for real use',
        );
      }
      smtp = await startFakeSmtpServer({
        host: config.smtp.host,
        port: config.smtp.port,
        logger,
        store: (message) => db.transaction((tx) => tx.outbox.insert(message)),
      });
    }
    // After migrations (its table) and the capture server (its first pass may deliver mail queued before a stop).
    composition.mail.start();
    // After migrations (the queue's tables) and mail (jobs notify their creators when they finish).
    await composition.jobs.runner.start();
    // The first pass waits a little, so a restart loop never spends its start-up walking the store.
    if (config.storeSweep.intervalMs > 0) composition.storeSweeper.schedule(config.storeSweep.intervalMs, 5 * 60_000);
    const app = createApp(composition);
    server = await new Promise<Server>((resolve, reject) => {
      const s = app.listen(config.port, config.host, (err?: Error) => (err ? reject(err) : resolve(s)));
    });
    logger.info({ url: config.publicUrl, host: config.host, port: config.port }, `Cellwright listening on ${config.publicUrl}`);
  } catch (err) {
    logger.fatal({ err }, 'startup failed');
    await composition.close().catch(() => undefined);
    if (smtp) await smtp.stop().catch(() => undefined);
    process.exit(1);
  }
}

void main();
