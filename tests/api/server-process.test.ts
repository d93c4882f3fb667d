import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startServer, type StartedServer } from '../helpers/server';

let server: StartedServer | undefined;

beforeAll(async () => {
  server = await startServer();
});
afterAll(async () => {
  // Normally stopped by the last test; this covers a failure before it.
  if (server) await server.stop().catch(() => undefined);
});

describe('server/index.ts as a process', () => {
  it('migrates its empty database and reports itself healthy', async () => {
    const res = await fetch(`${server!.url}/api/health`);
    expect(res.status).toBe(200);
    const body = await res.json();
    expect(body).toMatchObject({ status: 'ok', database: 'up' });
    expect(typeof body.version).toBe('string');
    const [rows] = (await server!.db.knex.raw(
      `SELECT COUNT(*) AS n FROM information_schema.TABLES WHERE TABLE_SCHEMA = ? AND TABLE_NAME IN ('users','teams','memberships')`,
      [server!.db.name],
    )) as [{ n: number }[]];
    expect(Number(rows[0].n)).toBe(3);
  });

  it('seeds the demo team with an admin, an engineer and a viewer', async () => {
    const rows = (await server!.db
      .knex('memberships as m')
      .join('users as u', 'u.id', 'm.user_id')
      .join('teams as t', 't.id', 'm.team_id')
      .orderBy('u.email')
      .select('t.name as team', 'u.email', 'm.role')) as { team: string; email: string; role: string }[];
    expect(rows).toEqual([
      { team: 'Bramblecove Seabed Survey (demo)', email: 'ada@bramblecove.test', role: 'admin' },
      { team: 'Bramblecove Seabed Survey (demo)', email: 'juno@bramblecove.test', role: 'viewer' },
      { team: 'Bramblecove Seabed Survey (demo)', email: 'tomas@bramblecove.test', role: 'engineer' },
    ]);
  });

  it('lets the demo admin sign in and see the team', async () => {
    const login = await fetch(`${server!.url}/api/auth/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: 'ada@bramblecove.test', password: 'harbour-admin-1' }),
    });
    expect(login.status).toBe(200);
    const cookie = login.headers.get('set-cookie') ?? '';
    expect(cookie).toMatch(/^cw_session=/);
    const me = await fetch(`${server!.url}/api/me`, { headers: { cookie: cookie.split(';')[0] } });
    expect(me.status).toBe(200);
    expect((await me.json()).teams).toEqual([expect.objectContaining({ name: 'Bramblecove Seabed Survey (demo)', role: 'admin' })]);
  });

  it('answers an unknown API path with the JSON 404 error shape', async () => {
    const api = await fetch(`${server!.url}/api/no-such-thing`);
    expect(api.status).toBe(404);
    expect((await api.json()).error.code).toBe('not_found');
  });

  it('keeps its data across a crash and restart without seeding again', async () => {
    await server!.kill();
    await server!.restart();
    const users = await server!.db.knex('users').count({ n: '*' }).first();
    expect(Number((users as { n: number }).n)).toBe(3);
    const res = await fetch(`${server!.url}/api/health`);
    expect(res.status).toBe(200);
  });

  it('exits 0 on SIGTERM', async () => {
    const status = await server!.stop();
    server = undefined;
    expect(status).toEqual({ code: 0, signal: null });
  });
});
