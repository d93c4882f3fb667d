// A pool thread that runs out of memory: its job fails with the reason and the server keeps serving, whether it
// outgrows its heap or holds typed arrays (which the heap limit does not cover) past JOB_TASK_MAX_HEAP_MB.
// Uses the test-only hooks JOB_TASK_MAX_HEAP_MB (a small limit per pool thread) and CELLWRIGHT_TEST_TASK_FAULT
// (oom: every task allocates until that heap is gone; typed-arrays: every task fills Float32Arrays no budget is
// charged for), documented in server/jobs/tasks/run-task.mjs.
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seabedSet } from '../../../server/seed/seabed-tiles';
import { signUpOn, startServer } from '../../helpers/server';

type RunBody = { id: number; state: string; error: string | null; jobs: { state: string; error: string | null }[] };

/** A server with its own account, team and a split set of seabed tiles (plus any extra training tiles given). */
async function studio(env: Record<string, string>, extra: { width: number; height: number }[] = []) {
  const server = await startServer({ SEED_DEMO: 'false', ...env });
  const account = await signUpOn(server, { email: `memory-${process.pid}-${server.port}@example.test`, password: 'correct-horse-battery', name: 'Memory', teamName: 'Memory Team' });
  const api = async (method: string, p: string, body?: unknown) => {
    const res = await fetch(`${server.url}${p}`, {
      method,
      headers: { Authorization: `Bearer ${account.token}`, ...(body === undefined ? {} : { 'Content-Type': 'application/json' }) },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
    return { status: res.status, body: (await res.json()) as Record<string, RunBody> };
  };
  const teamId = account.team.id;
  const setId = (await api('POST', `/api/teams/${teamId}/image-sets`, { name: 'Tiles' })).body.imageSet.id;
  const form = new FormData();
  const tiles = [...seabedSet(5, 4, 64, 48), ...extra.map((size, i) => seabedSet(50 + i, 1, size.width, size.height)[0])];
  for (const [i, t] of tiles.entries()) {
    const png = await sharp(Buffer.from(t.rgb), { raw: { width: t.width, height: t.height, channels: 3 } }).png().toBuffer();
    form.append('files', new Blob([new Uint8Array(png)], { type: 'image/png' }), `t-${i}.png`);
  }
  const upload = await fetch(`${server.url}/api/teams/${teamId}/image-sets/${setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${account.token}` }, body: form });
  expect(upload.status).toBe(201);
  const images = ((await upload.json()) as { images: { id: number; width: number }[] }).images;
  return { server, api, teamId, setId, images };
}

type Studio = Awaited<ReturnType<typeof studio>>;

async function finished(s: Studio, body: object): Promise<RunBody> {
  const created = await s.api('POST', `/api/teams/${s.teamId}/runs`, body);
  expect(created.status).toBe(201);
  let run = created.body.run;
  for (let i = 0; i < 1200 && !['succeeded', 'failed', 'cancelled'].includes(run.state); i += 1) {
    await new Promise((r) => setTimeout(r, 100));
    run = (await s.api('GET', `/api/teams/${s.teamId}/runs/${run.id}`)).body.run;
  }
  return run;
}

const reasons = (run: RunBody) => `${run.error ?? ''} ${run.jobs.map((j) => j.error ?? '').join(' ')}`;

describe('a pool thread out of memory', () => {
  let s: Studio;
  beforeAll(async () => {
    s = await studio({ JOB_TASK_MAX_HEAP_MB: '48', CELLWRIGHT_TEST_TASK_FAULT: 'oom' });
    expect((await s.api('POST', `/api/teams/${s.teamId}/image-sets/${s.setId}/split`, { heldOutFraction: 0.25, seed: 1 })).status).toBe(200);
  });
  afterAll(async () => {
    await s?.server.stop();
  });

  it('fails the job with a reason and leaves the server serving, twice in a row', async () => {
    for (const name of ['First starved run', 'Second starved run']) {
      const run = await finished(s, { name, trainingSetId: s.setId, heldOutSetId: s.setId, patch: { width: 4, height: 4 }, bits: 2 });
      expect(run.state).toBe('failed');
      expect(reasons(run)).toMatch(/memory/i);
      expect((await s.api('GET', '/api/health')).status).toBe(200);
      expect((await s.api('GET', `/api/teams/${s.teamId}/runs`)).status).toBe(200);
    }
  });
});

describe('typed arrays past the pool thread limit', () => {
  let s: Studio;
  beforeAll(async () => {
    s = await studio({ JOB_TASK_MAX_HEAP_MB: '48', CELLWRIGHT_TEST_TASK_FAULT: 'typed-arrays' });
    expect((await s.api('POST', `/api/teams/${s.teamId}/image-sets/${s.setId}/split`, { heldOutFraction: 0.25, seed: 1 })).status).toBe(200);
  });
  afterAll(async () => {
    await s?.server.stop();
  });

  it('fails the job with the reason when a task holds Float32Arrays beyond JOB_TASK_MAX_HEAP_MB, and the server keeps serving', async () => {
    for (const name of ['First hoarding run', 'Second hoarding run']) {
      const run = await finished(s, { name, trainingSetId: s.setId, heldOutSetId: s.setId, patch: { width: 4, height: 4 }, bits: 2 });
      expect(run.state).toBe('failed');
      expect(reasons(run)).toMatch(/ran out of memory: it holds \d+ MiB of typed arrays, more than its limit of 48 MiB \(JOB_TASK_MAX_HEAP_MB\)/);
      expect((await s.api('GET', '/api/health')).status).toBe(200);
      expect((await s.api('GET', `/api/teams/${s.teamId}/runs`)).status).toBe(200);
    }
  });
});

describe('a training image too large for the pool thread limit', () => {
  let s: Studio;
  beforeAll(async () => {
    // 2048 × 2048 rgb decodes to 2048² × 15 bytes = 60 MiB: past a 48 MiB limit on its own.
    s = await studio({ JOB_TASK_MAX_HEAP_MB: '48' }, [{ width: 2048, height: 2048 }]);
  });
  afterAll(async () => {
    await s?.server.stop();
  });

  it('fails the job naming the image and the figures instead of decoding it, and the next run on the same pool succeeds', async () => {
    const [big] = s.images.filter((i) => i.width === 2048);
    const small = s.images.filter((i) => i.width !== 2048).map((i) => i.id);
    const body = { patch: { width: 2, height: 2 }, color: 'rgb', bits: 2, heldOutImageIds: [small[0]] };
    const failed = await finished(s, { ...body, name: 'Too big to decode', trainingImageIds: [small[1], big.id] });
    expect(failed.state).toBe('failed');
    expect(reasons(failed)).toContain(
      `decoding t-4.png (2048×2048 rgb) needs 60.0 MiB (62914560 bytes), but this job task (JOB_TASK_MAX_HEAP_MB) may hold 48.0 MiB`,
    );
    expect((await s.api('GET', '/api/health')).status).toBe(200);
    const fine = await finished(s, { ...body, name: 'Small enough', trainingImageIds: small.slice(1) });
    expect(fine.error).toBeNull();
    expect(fine.state).toBe('succeeded');
  });
});
