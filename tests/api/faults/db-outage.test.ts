// The database goes away under a running server and comes back: while it is down every request is answered
// 503 in the error shape, and afterwards the same process serves again without a restart.
// Uses a throwaway MariaDB of its own (scripts/db.sh with a temporary DB_DIR and port), never the shared one.
import { execFile } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { getFreePort } from '../../helpers/ports';
import { signUpOn, startServer, type StartedServer } from '../../helpers/server';

const run = promisify(execFile);
const root = fileURLToPath(new URL('../../..', import.meta.url));
let dbEnv: Record<string, string>;
let dbDir: string;
let server: StartedServer;
let token: string;
let teamId: number;

const db = (action: 'start' | 'stop') => run('bash', [path.join(root, 'scripts/db.sh'), action], { env: { ...process.env, ...dbEnv }, timeout: 90_000 });

async function get(p: string) {
  const res = await fetch(`${server.url}${p}`, { headers: { Authorization: `Bearer ${token}` }, signal: AbortSignal.timeout(15_000) });
  return { status: res.status, body: (await res.json()) as { error?: { code: string; message: string } } & Record<string, unknown> };
}

beforeAll(async () => {
  dbDir = mkdtempSync(path.join(tmpdir(), 'cw-outage-'));
  dbEnv = { DB_DIR: path.join(dbDir, 'db'), DB_PORT: String(await getFreePort()), DB_HOST: '127.0.0.1', DB_NAME: 'cellwright', DB_USER: 'cellwright', DB_PASSWORD: 'outage-test' };
  await db('start');
  // startServer makes its database through the test helpers, which read these from the environment.
  const saved = { DB_PORT: process.env.DB_PORT, DB_PASSWORD: process.env.DB_PASSWORD, DB_HOST: process.env.DB_HOST, DB_USER: process.env.DB_USER };
  Object.assign(process.env, { DB_PORT: dbEnv.DB_PORT, DB_PASSWORD: dbEnv.DB_PASSWORD, DB_HOST: dbEnv.DB_HOST, DB_USER: dbEnv.DB_USER });
  try {
    server = await startServer({ SEED_DEMO: 'false' });
  } finally {
    for (const [k, v] of Object.entries(saved)) {
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
    }
  }
  const account = await signUpOn(server, { email: `outage-${process.pid}@example.test`, password: 'correct-horse-battery', name: 'Outage', teamName: 'Outage Team' });
  token = account.token;
  teamId = account.team.id;
});

afterAll(async () => {
  // The database must be up for stop() to drop the test database; start is a no-op when it already runs.
  await db('start').catch(() => undefined);
  await server?.stop().catch(() => undefined);
  await db('stop').catch(() => undefined);
  rmSync(dbDir, { recursive: true, force: true });
});

describe('a database outage', () => {
  it('answers 503 in the error shape while the database is down and serves again once it is back', async () => {
    expect((await get(`/api/teams/${teamId}/image-sets`)).status).toBe(200);

    await db('stop');
    const health = await get('/api/health');
    expect(health.status).toBe(503);
    expect(health.body).toMatchObject({ status: 'degraded', database: 'down' });
    for (const p of [`/api/teams/${teamId}/image-sets`, `/api/teams/${teamId}/runs`, '/api/me']) {
      const res = await get(p);
      expect(res.status, p).toBe(503);
      expect(res.body.error?.code).toBe('service_unavailable');
      expect(res.body.error?.message).toMatch(/database/i);
    }
    const write = await fetch(`${server.url}/api/teams/${teamId}/image-sets`, {
      method: 'POST',
      headers: { Authorization: `Bearer ${token}`, 'Content-Type': 'application/json' },
      body: JSON.stringify({ name: 'During the outage' }),
    });
    expect(write.status).toBe(503);

    await db('start');
    // The pool's old connections are dead; the first requests may still see that. It must recover by itself.
    const deadline = Date.now() + 30_000;
    let status = 0;
    while (Date.now() < deadline) {
      status = (await get(`/api/teams/${teamId}/image-sets`)).status;
      if (status === 200) break;
      expect(status).toBe(503);
      await new Promise((r) => setTimeout(r, 250));
    }
    expect(status).toBe(200);
    for (let i = 0; i < 5; i += 1) expect((await get(`/api/teams/${teamId}/runs`)).status).toBe(200);
    expect((await get('/api/health')).status).toBe(200);
    // The refused write did not happen behind the client's back.
    const sets = (await get(`/api/teams/${teamId}/image-sets`)).body.imageSets as { name: string }[];
    expect(sets.map((s) => s.name)).not.toContain('During the outage');
  });
});
