// Secrets stay secret: password hashes of a real cost, no password in any log line or response, one-time
// tokens stored only as hashes and usable once, the session cookie's attributes, and cross-site refusals.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, readdirSync, rmSync, statSync } from 'node:fs';
import https from 'node:https';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../../server/config';
import { linkToken, mailFor, waitForMail, waitForQueueEmpty } from '../../helpers/mailbox';
import { signUpOn, startServer, type StartedServer } from '../../helpers/server';
import { call, defaultParams, fillPath, routes } from '../hostile/routes';
import { buildWorld, rowCounts, type World } from '../hostile/world';

const root = fileURLToPath(new URL('../../..', import.meta.url));
// bcrypt's modular crypt format: $2a$/$2b$/$2y$, two-digit cost, 22 characters of salt and 31 of hash
// (the OpenBSD bcrypt paper's encoding; format from memory, checked against the bcryptjs output it matches).
const bcryptFormat = /^\$2[aby]\$(\d{2})\$[./A-Za-z0-9]{53}$/;

describe('a spawned server with the default hash cost and the most verbose log', () => {
  let server: StartedServer;
  const password = `Tide-Gauge-${process.pid}-secret`;
  const newPassword = `Swell-Period-${process.pid}-secret`;
  const inviteePassword = `Kelp-Forest-${process.pid}-secret`;
  const bodies: string[] = [];

  async function post(p: string, body: unknown, token?: string) {
    const res = await fetch(`${server.url}${p}`, {
      method: 'POST',
      headers: { 'Content-Type': 'application/json', ...(token ? { Authorization: `Bearer ${token}` } : {}) },
      body: JSON.stringify(body),
    });
    const text = await res.text();
    bodies.push(text);
    return { status: res.status, json: text ? JSON.parse(text) : null };
  }

  beforeAll(async () => {
    server = await startServer({ SEED_DEMO: 'false', BCRYPT_COST: '12', LOG_LEVEL: 'trace' });
  });
  afterAll(async () => {
    await server?.stop();
  });

  it('stores bcrypt hashes of cost 12 and returns or logs no password anywhere', async () => {
    const email = `hash-${process.pid}@example.test`;
    const { team } = await signUpOn(server, { email, password, name: 'Hash Checker', teamName: 'Hash Team' });
    expect((await post('/api/auth/login', { email, password: 'wrong-password-1' })).status).toBe(401);
    expect((await post('/api/auth/login', { email, password })).status).toBe(200);

    // A reset round trip and an invitation acceptance: both carry passwords in their bodies.
    expect((await post('/api/auth/password-reset', { email })).status).toBe(202);
    const reset = linkToken(await waitForMail(server.db.knex, email, { subject: /reset/i }), 'reset-password');
    expect((await post('/api/auth/password-reset/confirm', { token: reset.token, password: newPassword })).status).toBe(204);
    const relogin = await post('/api/auth/login', { email, password: newPassword });
    const inviteeEmail = `invitee-${process.pid}@example.test`;
    expect((await post(`/api/teams/${team.id}/invitations`, { email: inviteeEmail, role: 'viewer' }, (relogin.json as { token: string }).token)).status).toBe(201);
    const invite = linkToken(await waitForMail(server.db.knex, inviteeEmail, { subject: /invited/i }), 'invite');
    expect((await post(`/api/invitations/${invite.token}/accept`, { name: 'Invitee', password: inviteePassword })).status).toBe(200);

    const hashes = (await server.db.knex('users').select('password_hash')) as { password_hash: string }[];
    expect(hashes).toHaveLength(2);
    for (const { password_hash } of hashes) {
      const m = bcryptFormat.exec(password_hash);
      expect(m, password_hash).not.toBeNull();
      // OWASP Password Storage Cheat Sheet: bcrypt work factor of 10 or more.
      expect(Number(m![1])).toBe(12);
    }

    // Give the log a moment to flush what the last requests wrote.
    await new Promise((r) => setTimeout(r, 300));
    const log = server.output();
    expect(log.length).toBeGreaterThan(1000);
    for (const secret of [password, newPassword, inviteePassword, 'wrong-password-1', reset.token, invite.token]) {
      expect(log).not.toContain(secret);
      expect(bodies.join('\n')).not.toContain(secret);
    }
    expect(bodies.join('\n')).not.toMatch(/\$2[aby]\$/);
  });

  it('keeps only SHA-256 hashes of one-time tokens, never the tokens themselves', async () => {
    const email = `tokens-${process.pid}@example.test`;
    const signup = await signUpOn(server, { email, password, name: 'Token Checker', teamName: 'Token Team' });
    const teamId = signup.team.id;
    const signupToken = linkToken((await mailFor(server.db.knex, email)).find((m) => /finish creating/i.test(m.subject))!, 'sign-up').token;
    await post('/api/auth/password-reset', { email });
    const reset = linkToken(await waitForMail(server.db.knex, email, { subject: /reset/i }), 'reset-password');
    const inviteeEmail = `token-invitee-${process.pid}@example.test`;
    await post(`/api/teams/${teamId}/invitations`, { email: inviteeEmail, role: 'engineer' }, signup.token);
    const invite = linkToken(await waitForMail(server.db.knex, inviteeEmail, { subject: /invited/i }), 'invite');
    // The sender marks a message sent (and clears account mail's body) just after the capture server stored it.
    await waitForQueueEmpty(server.db.knex);

    // SHA-256 via node:crypto (FIPS 180-4), hex as the columns store it.
    const sha = (s: string) => createHash('sha256').update(s, 'utf8').digest('hex');
    const resets = (await server.db.knex('password_resets').select()) as Record<string, unknown>[];
    const invitations = (await server.db.knex('invitations').select()) as Record<string, unknown>[];
    const signups = (await server.db.knex('signup_links').select()) as Record<string, unknown>[];
    expect(resets.map((r) => r.token_hash)).toContain(sha(reset.token));
    expect(invitations.map((r) => r.token_hash)).toContain(sha(invite.token));
    expect(signups.map((r) => r.token_hash)).toContain(sha(signupToken));
    // Every table but the fake SMTP outbox (which holds the mail itself, by design) is free of the raw tokens;
    // the mail queue keeps a team's invitation text for its Outbox, but no account mail (reset, sign-up) once sent.
    const tables = (await server.db.knex('information_schema.tables').where({ table_schema: server.db.name }).select('table_name as name')) as { name: string }[];
    for (const { name } of tables.filter((t) => !t.name.startsWith('outbox'))) {
      const dump = JSON.stringify(await server.db.knex(name).select());
      expect(dump, name).not.toContain(reset.token);
      expect(dump, name).not.toContain(signupToken);
      if (name !== 'mail_queue') expect(dump, name).not.toContain(invite.token);
    }
  });

  it('accepts a reset token once, refuses it again with 410, and refuses an expired one with 410', async () => {
    const email = `once-${process.pid}@example.test`;
    await signUpOn(server, { email, password, name: 'Once', teamName: 'Once Team' });
    await post('/api/auth/password-reset', { email });
    const firstMail = await waitForMail(server.db.knex, email, { subject: /reset/i });
    const first = linkToken(firstMail, 'reset-password');
    expect((await post('/api/auth/password-reset/confirm', { token: first.token, password: newPassword })).status).toBe(204);
    const again = await post('/api/auth/password-reset/confirm', { token: first.token, password: 'yet-another-password' });
    expect(again.status).toBe(410);
    expect(again.json).toMatchObject({ error: { code: 'token_used' } });

    await post('/api/auth/password-reset', { email });
    const second = linkToken(await waitForMail(server.db.knex, email, { subject: /reset/i, afterId: firstMail.id }), 'reset-password');
    const hash = createHash('sha256').update(second.token, 'utf8').digest('hex');
    expect(await server.db.knex('password_resets').where({ token_hash: hash }).update({ expires_at: new Date(Date.now() - 60_000) })).toBe(1);
    const expired = await post('/api/auth/password-reset/confirm', { token: second.token, password: 'yet-another-password' });
    expect(expired.status).toBe(410);
    expect(expired.json).toMatchObject({ error: { code: 'token_expired' } });
    // The password is still the one the first link set.
    expect((await post('/api/auth/login', { email, password: newPassword })).status).toBe(200);
  });
});

describe('the configuration', () => {
  it('defaults to bcrypt cost 12 and refuses a cost below 10 (OWASP Password Storage Cheat Sheet)', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'cw-cfg-'));
    try {
      expect(loadConfig({ DATA_DIR: dir, JWT_SECRET: 'k'.repeat(40) }).bcryptCost).toBe(12);
      expect(() => loadConfig({ DATA_DIR: dir, JWT_SECRET: 'k'.repeat(40), BCRYPT_COST: '9' })).toThrow(/BCRYPT_COST/);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('over TLS and across sites', () => {
  let w: World;
  let certDir: string;
  beforeAll(async () => {
    w = await buildWorld();
    certDir = mkdtempSync(path.join(tmpdir(), 'cw-tls-'));
    // A throwaway self-signed certificate for 127.0.0.1 (common practice for local TLS tests).
    execFileSync('openssl', ['req', '-x509', '-newkey', 'ec', '-pkeyopt', 'ec_paramgen_curve:prime256v1', '-nodes', '-days', '1', '-subj', '/CN=127.0.0.1',
      '-keyout', path.join(certDir, 'key.pem'), '-out', path.join(certDir, 'cert.pem')], { stdio: 'ignore' });
  });
  afterAll(async () => {
    await w?.close();
    if (certDir) rmSync(certDir, { recursive: true, force: true });
  });

  it('sets the session cookie HttpOnly, SameSite=Strict and Secure when served over TLS (RFC 6265 §4.1.2)', async () => {
    const server = https.createServer({ key: readFileSync(path.join(certDir, 'key.pem')), cert: readFileSync(path.join(certDir, 'cert.pem')) }, w.t.app);
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
    try {
      const port = (server.address() as AddressInfo).port;
      const setCookie = await new Promise<string[]>((resolve, reject) => {
        const req = https.request(
          { host: '127.0.0.1', port, path: '/api/auth/login', method: 'POST', rejectUnauthorized: false, headers: { 'Content-Type': 'application/json' } },
          (res) => {
            res.resume();
            res.on('end', () => (res.statusCode === 200 ? resolve(res.headers['set-cookie'] ?? []) : reject(new Error(`login answered ${res.statusCode}`))));
          },
        );
        req.on('error', reject);
        req.end(JSON.stringify({ email: w.viewer.user.email, password: 'correct-horse-battery' }));
      });
      const cookie = setCookie.find((c) => c.startsWith('cw_session='));
      expect(cookie).toBeDefined();
      // RFC 6265 §5.2: attribute names are case-insensitive.
      expect(cookie).toMatch(/;\s*HttpOnly/i);
      expect(cookie).toMatch(/;\s*SameSite=Strict/i);
      expect(cookie).toMatch(/;\s*Secure(;|$)/i);
    } finally {
      server.closeAllConnections();
      await new Promise<void>((r) => server.close(() => r()));
    }
  });

  const mutating = routes.filter((r) => r.method !== 'GET' && r.access !== 'public');

  it.each(mutating.map((r) => [`${r.method} ${r.path}`, r] as const))('refuses %s from a foreign Origin or a cross-site fetch with 403, changing nothing', async (_l, route) => {
    const params = { ...defaultParams(w), ...(route.fresh ? await route.fresh(w) : {}) };
    const url = fillPath(route.path, params);
    for (const headers of [{ Origin: 'https://attacker.example' }, { 'Sec-Fetch-Site': 'cross-site' }] as Record<string, string>[]) {
      const before = await rowCounts(w);
      // The session is the cookie here, as a browser would send it, which is what a forged request rides on.
      const res = await call(w, route, url, { cookie: w.admin.cookie, headers, json: route.body === 'json' ? route.valid!(w) : undefined });
      expect(res.status).toBe(403);
      expect(res.json).toMatchObject({ error: { code: 'forbidden' } });
      expect(await rowCounts(w)).toEqual(before);
    }
  });

  it('lets a same-origin browser request through', async () => {
    const res = await call(w, { method: 'POST', body: 'json' }, `/api/teams/${w.teamId}/image-sets`, {
      cookie: w.admin.cookie,
      headers: { 'Sec-Fetch-Site': 'same-origin' },
      json: { name: 'Same origin set' },
    });
    expect(res.status).toBe(201);
  });

  it('sends helmet security headers on API answers', async () => {
    const res = await fetch(`${w.base}/api/health`);
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect(res.headers.get('strict-transport-security')).toMatch(/max-age=\d+/);
    expect(res.headers.get('content-security-policy')).toContain("default-src 'self'");
    expect(res.headers.get('cross-origin-opener-policy')).toBe('same-origin');
    expect(res.headers.get('x-powered-by')).toBeNull();
  });
});

describe('SQL', () => {
  /** Every .ts file under a folder. */
  const sources = (dir: string): string[] =>
    readdirSync(dir).flatMap((n) => {
      const full = path.join(dir, n);
      return statSync(full).isDirectory() ? sources(full) : n.endsWith('.ts') ? [full] : [];
    });

  it('is built only with Knex bindings: no raw SQL fragment interpolates a value', () => {
    const offenders: string[] = [];
    for (const file of [...sources(path.join(root, 'server/db')), ...sources(path.join(root, 'server'))].filter((f, i, a) => a.indexOf(f) === i)) {
      const text = readFileSync(file, 'utf8');
      // raw, whereRaw, havingRaw, orderByRaw, joinRaw…: a template literal with ${…} as the SQL text.
      for (const m of text.matchAll(/\.(raw|\w+Raw)\(\s*`([^`]*)`/g)) {
        if (m[2].includes('${')) offenders.push(`${path.relative(root, file)}: .${m[1]}(\`${m[2].slice(0, 60)}\`)`);
      }
      // String concatenation into a raw fragment is the same mistake.
      for (const m of text.matchAll(/\.(raw|\w+Raw)\(\s*(['"])[^'"]*\2\s*\+/g)) offenders.push(`${path.relative(root, file)}: .${m[1]}('…' + …)`);
    }
    expect(offenders).toEqual([]);
  });
});
