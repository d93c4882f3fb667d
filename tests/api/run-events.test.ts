import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let server: Server;
let base: string;
let setId: number;

interface ServerEvent {
  event: string;
  data: Record<string, unknown>;
}

/** Reads a text/event-stream (WHATWG HTML "Server-sent events" framing: blank-line separated fields) until `until` says stop. */
async function readEvents(res: Response, until: (e: ServerEvent) => boolean): Promise<ServerEvent[]> {
  const reader = res.body!.getReader();
  const decoder = new TextDecoder();
  const events: ServerEvent[] = [];
  let buffer = '';
  for (;;) {
    const { value, done } = await reader.read();
    if (done) return events;
    buffer += decoder.decode(value, { stream: true });
    let cut: number;
    while ((cut = buffer.indexOf('\n\n')) >= 0) {
      const block = buffer.slice(0, cut);
      buffer = buffer.slice(cut + 2);
      const fields = Object.fromEntries(block.split('\n').filter((l) => l && !l.startsWith(':')).map((l) => [l.slice(0, l.indexOf(':')), l.slice(l.indexOf(':') + 1).trimStart()]));
      if (!fields.event) continue;
      const e = { event: fields.event, data: JSON.parse(fields.data) as Record<string, unknown> };
      events.push(e);
      if (until(e)) {
        await reader.cancel();
        return events;
      }
    }
  }
}

const openStream = (runId: number, session = team.viewer, signal?: AbortSignal) =>
  fetch(`${base}/api/teams/${team.teamId}/runs/${runId}/events`, { headers: bearer(session), signal });

async function startRun(name: string, bits: { from: number; to: number }, maxIterations: number) {
  const res = await request(t.app)
    .post(`/api/teams/${team.teamId}/runs`)
    .set(bearer(team.engineer))
    .send({ name, trainingSetId: setId, heldOutSetId: setId, patch: { width: 4, height: 4 }, bits, epsilon: 0.000001, maxIterations });
  expect(res.status).toBe(201);
  return res.body.run.id as number;
}

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Events Team');
  const created = await request(t.app).post(`/api/teams/${team.teamId}/image-sets`).set(bearer(team.engineer)).send({ name: 'Tiles' });
  setId = created.body.imageSet.id;
  let upload = request(t.app).post(`/api/teams/${team.teamId}/image-sets/${setId}/images`).set(bearer(team.engineer));
  for (const [i, tile] of seabedSet(21, 6, 96, 64).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    upload = upload.attach('files', png, `tile-${i}.png`);
  }
  expect((await upload).status).toBe(201);
  await request(t.app).post(`/api/teams/${team.teamId}/image-sets/${setId}/split`).set(bearer(team.engineer)).send({ heldOutFraction: 0.34, seed: 2 });
  server = await new Promise<Server>((resolve) => {
    const s = t.app.listen(0, '127.0.0.1', () => resolve(s));
  });
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await new Promise((r) => server?.close(r));
  await t?.close();
});

describe('run events', () => {
  it('sends the snapshot, then progress of the running job, then the terminal state, and ends', async () => {
    // Subscribed while the run is still queued (the runner starts after), so no progress can be missed.
    const runId = await startRun('Streamed', { from: 2, to: 7 }, 60);
    const res = await openStream(runId);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^text\/event-stream/);
    const reading = readEvents(res, (e) => e.event === 'end');
    await t.composition.jobs.runner.start();
    const events = await reading;

    expect(events[0].event).toBe('snapshot');
    expect((events[0].data.run as { state: string }).state).toBe('queued');
    const progress = events.filter((e) => e.event === 'progress');
    expect(progress.length).toBeGreaterThan(3);
    expect(progress.some((e) => e.data.kind === 'train' && (e.data.progress as { phase: string }).phase === 'training')).toBe(true);
    const fractions = progress.filter((e) => e.data.kind === 'train').map((e) => (e.data.progress as { fraction: number }).fraction);
    expect(fractions).toEqual([...fractions].sort((a, b) => a - b));
    const states = events.filter((e) => e.event === 'state').map((e) => [e.data.kind, e.data.state]);
    expect(states).toEqual(expect.arrayContaining([['train', 'running'], ['train', 'succeeded'], ['evaluate', 'succeeded']]));
    const end = events.at(-1)!;
    expect(end.event).toBe('end');
    expect((end.data.run as { state: string }).state).toBe('succeeded');
  });

  it('answers a finished run with its snapshot and an immediate end', async () => {
    const [run] = await t.db.knex('runs').where({ team_id: team.teamId, state: 'succeeded' }).select('id');
    const events = await readEvents(await openStream(run.id), (e) => e.event === 'end');
    expect(events.map((e) => e.event)).toEqual(['snapshot', 'end']);
  });

  it('drops its subscription when the client disconnects', async () => {
    const before = t.composition.jobs.bus.listenerCount();
    const runId = await startRun('Left early', { from: 0, to: 9 }, 1000);
    const controller = new AbortController();
    const res = await openStream(runId, team.viewer, controller.signal);
    await readEvents(res, (e) => e.event === 'snapshot');
    expect(t.composition.jobs.bus.listenerCount()).toBe(before + 1);
    controller.abort();
    for (let i = 0; i < 100 && t.composition.jobs.bus.listenerCount() > before; i += 1) await new Promise((r) => setTimeout(r, 50));
    expect(t.composition.jobs.bus.listenerCount()).toBe(before);
    await request(t.app).post(`/api/teams/${team.teamId}/runs/${runId}/cancel`).set(bearer(team.engineer)).expect(200);
  });

  it('answers an unknown run with a JSON 404, not a stream', async () => {
    const res = await openStream(999_999);
    expect(res.status).toBe(404);
    expect((await res.json()).error.code).toBe('not_found');
  });
});
