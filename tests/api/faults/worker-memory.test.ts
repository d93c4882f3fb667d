// A pool thread that runs out of memory: its job fails with the reason and the server keeps serving.
// Uses the test-only hooks JOB_TASK_MAX_HEAP_MB (a small heap per pool thread) and
// CELLWRIGHT_TEST_TASK_FAULT=oom (every task allocates until that heap is gone), documented in server/jobs/pool.ts.
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seabedSet } from '../../../server/seed/seabed-tiles';
import { signUpOn, startServer, type StartedServer } from '../../helpers/server';

let server: StartedServer;
let token: string;
let teamId: number;
let setId: number;

async function api(method: string, p: string, body?: unknown) {
  const res = await fetch(`${server.url}${p}`, {
    method,
    headers: { Authorization: `Bearer ${token}`, ...(body === undefined ? {} : { 'Content-Type': 'application/json' }) },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  return { status: res.status, body: (await res.json()) as Record<string, { id: number; state: string; error: string | null; jobs: { state: string; error: string | null }[] }> };
}

beforeAll(async () => {
  server = await startServer({ SEED_DEMO: 'false', JOB_TASK_MAX_HEAP_MB: '48', CELLWRIGHT_TEST_TASK_FAULT: 'oom' });
  const account = await signUpOn(server, { email: `oom-${process.pid}@example.test`, password: 'correct-horse-battery', name: 'OOM', teamName: 'OOM Team' });
  token = account.token;
  teamId = account.team.id;
  setId = (await api('POST', `/api/teams/${teamId}/image-sets`, { name: 'Tiles' })).body.imageSet.id;
  const form = new FormData();
  for (const [i, t] of seabedSet(5, 4, 64, 48).entries()) {
    const png = await sharp(Buffer.from(t.rgb), { raw: { width: t.width, height: t.height, channels: 3 } }).png().toBuffer();
    form.append('files', new Blob([new Uint8Array(png)], { type: 'image/png' }), `t-${i}.png`);
  }
  const upload = await fetch(`${server.url}/api/teams/${teamId}/image-sets/${setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${token}` }, body: form });
  expect(upload.status).toBe(201);
  expect((await api('POST', `/api/teams/${teamId}/image-sets/${setId}/split`, { heldOutFraction: 0.25, seed: 1 })).status).toBe(200);
});

afterAll(async () => {
  await server?.stop();
});

describe('a pool thread out of memory', () => {
  it('fails the job with a reason and leaves the server serving, twice in a row', async () => {
    for (const name of ['First starved run', 'Second starved run']) {
      const created = await api('POST', `/api/teams/${teamId}/runs`, { name, trainingSetId: setId, heldOutSetId: setId, patch: { width: 4, height: 4 }, bits: 2 });
      expect(created.status).toBe(201);
      let run = created.body.run;
      for (let i = 0; i < 600 && !['succeeded', 'failed', 'cancelled'].includes(run.state); i += 1) {
        await new Promise((r) => setTimeout(r, 100));
        run = (await api('GET', `/api/teams/${teamId}/runs/${run.id}`)).body.run;
      }
      expect(run.state).toBe('failed');
      expect(`${run.error ?? ''} ${run.jobs.map((j) => j.error ?? '').join(' ')}`).toMatch(/memory/i);
      expect((await api('GET', '/api/health')).status).toBe(200);
      expect((await api('GET', `/api/teams/${teamId}/runs`)).status).toBe(200);
    }
  });
});
