import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import type { Express } from 'express';
import request from 'supertest';
import { createApp } from '../../server/app';
import { compose, type ComposeOptions, type Composition } from '../../server/composition';
import { loadConfig } from '../../server/config';
import { wrapKnex } from '../../server/db';
import { startFakeSmtpServer, type FakeSmtpServer } from '../../server/mail/fake-smtp-server';
import { createTestDatabase, type TestDatabase } from './db';
import { getFreePort } from './ports';
import { testRedisUrl } from './redis';

export interface TestApp {
  app: Express;
  db: TestDatabase;
  composition: Composition;
  smtp: FakeSmtpServer;
  smtpPort: number;
  /** Starts the fake SMTP server on smtpPort when createTestApp was told not to. */
  startSmtp(): Promise<void>;
  publicUrl: string;
  close(): Promise<void>;
}

const testApps = new WeakMap<Express, TestApp>();

export interface TestAppOptions extends Pick<ComposeOptions, 'now' | 'passwords'> {
  /** Start the fake SMTP server (default); false leaves SMTP_PORT closed until the test starts one there. */
  smtp?: boolean;
}

/**
 * The real app in-process on a fresh migrated database, with mail going over SMTP on loopback to
 * the fake server, which stores it in the same database. The mail sender runs, as in the server.
 * Rate limits are set high unless `env` says otherwise: many tests sign up many accounts from 127.0.0.1.
 */
export async function createTestApp(env: Record<string, string> = {}, options: TestAppOptions = {}): Promise<TestApp> {
  const db = await createTestDatabase();
  const dataDir = mkdtempSync(path.join(tmpdir(), 'cellwright-api-'));
  const smtpPort = await getFreePort();
  const publicUrl = 'http://127.0.0.1:8420';
  const config = loadConfig({
    NODE_ENV: 'test',
    LOG_LEVEL: 'silent',
    BCRYPT_COST: '10',
    DATA_DIR: dataDir,
    DB_HOST: db.config.host,
    DB_PORT: String(db.config.port),
    DB_USER: db.config.user,
    DB_PASSWORD: db.config.password,
    DB_NAME: db.name,
    REDIS_URL: testRedisUrl(),
    SMTP_HOST: '127.0.0.1',
    SMTP_PORT: String(smtpPort),
    PUBLIC_URL: publicUrl,
    SERVE_CLIENT: 'false',
    LOGIN_RATE_LIMIT: '100000',
    ACCOUNT_RATE_LIMIT: '100000',
    ...env,
  });
  const composition = compose(config, { db: wrapKnex(db.knex), now: options.now, passwords: options.passwords });
  const startSmtp = () =>
    startFakeSmtpServer({
      host: '127.0.0.1',
      port: smtpPort,
      store: (message) => composition.db.transaction((tx) => tx.outbox.insert(message)),
    });
  let smtp: FakeSmtpServer | null = options.smtp === false ? null : await startSmtp();
  composition.mail.start();
  const app = createApp(composition);
  const t: TestApp = {
    app,
    db,
    composition,
    get smtp() {
      if (!smtp) throw new Error('the fake SMTP server was not started (smtp: false)');
      return smtp;
    },
    smtpPort,
    async startSmtp() {
      smtp ??= await startSmtp();
    },
    publicUrl,
    async close() {
      await composition.services.accounts.flush();
      await composition.mail.stop();
      await smtp?.stop();
      await db.destroy();
      rmSync(dataDir, { recursive: true, force: true });
    },
  };
  testApps.set(app, t);
  return t;
}

export interface Session {
  token: string;
  cookie: string;
  user: { id: number; email: string; name: string };
  teamId: number;
}

let counter = 0;
export const uniqueEmail = (prefix = 'user') => `${prefix}-${process.pid}-${Date.now()}-${++counter}@example.test`;

export const testPassword = 'correct-horse-battery';

/** The cw_session=… pair of a response's Set-Cookie, ready for a Cookie header. */
export function sessionCookieOf(res: request.Response): string {
  const header = res.headers['set-cookie'] as unknown as string[] | string | undefined;
  const all = Array.isArray(header) ? header : header ? [header] : [];
  const cookie = all.find((c) => c.startsWith('cw_session='));
  if (!cookie) throw new Error('no cw_session cookie set');
  return cookie.split(';')[0];
}

/**
 * Signs up the way a person does: asks for the link, reads it from the captured mail, and finishes with name,
 * password and team name.
 */
export async function signUp(app: Express, overrides: Partial<{ email: string; name: string; teamName: string; password: string }> = {}): Promise<Session> {
  const t = testApps.get(app);
  if (!t) throw new Error('signUp needs an app made by createTestApp');
  const email = (overrides.email ?? uniqueEmail()).trim().toLowerCase();
  const { waitForMail, linkToken, mailFor } = await import('./mailbox');
  const afterId = (await mailFor(t.db.knex, email))[0]?.id ?? 0;
  const asked = await request(app).post('/api/auth/signup').send({ email });
  if (asked.status !== 202) throw new Error(`signup failed: ${asked.status} ${JSON.stringify(asked.body)}`);
  await t.composition.services.accounts.settle();
  const { token } = linkToken(await waitForMail(t.db.knex, email, { subject: /finish creating/i, afterId }), 'sign-up');
  const res = await request(app)
    .post('/api/auth/signup/complete')
    .send({ token, password: overrides.password ?? testPassword, name: overrides.name ?? 'Test Person', teamName: overrides.teamName ?? 'Test Team' });
  if (res.status !== 201) throw new Error(`signup failed: ${res.status} ${JSON.stringify(res.body)}`);
  return { token: res.body.token, cookie: sessionCookieOf(res), user: res.body.user, teamId: res.body.team.id };
}

export const bearer = (s: { token: string }) => ({ Authorization: `Bearer ${s.token}` });

/** Invites `email` into the admin's team with `role` and accepts by the e-mailed link as a new account. */
export async function addMember(t: TestApp, admin: Session, role: 'admin' | 'engineer' | 'viewer', email = uniqueEmail(role)): Promise<Session> {
  const { waitForMail, linkToken } = await import('./mailbox');
  const invite = await request(t.app).post(`/api/teams/${admin.teamId}/invitations`).set(bearer(admin)).send({ email, role });
  if (invite.status !== 201) throw new Error(`invite failed: ${invite.status} ${JSON.stringify(invite.body)}`);
  await t.composition.services.accounts.settle();
  const mail = await waitForMail(t.db.knex, email, { subject: /invited/i });
  const { token } = linkToken(mail, 'invite');
  const accepted = await request(t.app)
    .post(`/api/invitations/${token}/accept`)
    .send({ name: `The ${role}`, password: testPassword });
  if (accepted.status !== 200) throw new Error(`accept failed: ${accepted.status} ${JSON.stringify(accepted.body)}`);
  return { token: accepted.body.token, cookie: sessionCookieOf(accepted), user: accepted.body.user, teamId: admin.teamId };
}

/** A team with one admin, one engineer and one viewer, each signed in. */
export async function teamWithRoles(t: TestApp, teamName = 'Test Team') {
  const admin = await signUp(t.app, { teamName, email: uniqueEmail('admin') });
  const engineer = await addMember(t, admin, 'engineer');
  const viewer = await addMember(t, admin, 'viewer');
  return { teamId: admin.teamId, admin, engineer, viewer };
}
