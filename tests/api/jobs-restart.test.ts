import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { wrapKnex } from '../../server/db';
import { createJobStore } from '../../server/jobs/job-store';
import { LeaseLostError, MAX_ATTEMPTS } from '../../server/jobs/queue';
import { createLogger } from '../../server/config';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { createTestDatabase } from '../helpers/db';
import { signUpOn, startServer, type StartedServer } from '../helpers/server';

const silentLogger = createLogger('silent');
let server: StartedServer;
let token: string;
let teamId: number;
let setId: number;

async function api(method: string, path: string, body?: unknown) {
  const res = await fetch(`${server.url}${path}`, {
    method,
    headers: { Authorization: `Bearer ${token}`, ...(body === undefined ? {} : { 'Content-Type': 'application/json' }) },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  // eslint-disable-next-line @typescript-eslint/no-explicit-any -- response bodies are checked field by field below
  return { status: res.status, body: (await res.json()) as Record<string, any> };
}

type RunView = { state: string; error: string | null; jobs: { kind: string; state: string; attempts: number; progress: { phase: string } | null }[] };

async function waitForRun(runId: number, done: (run: RunView) => boolean): Promise<RunView> {
  for (let i = 0; i < 3000; i += 1) {
    const res = await api('GET', `/api/teams/${teamId}/runs/${runId}`);
    if (res.status === 200 && done(res.body.run)) return res.body.run;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`run ${runId} never reached the awaited state`);
}
const terminal = (run: RunView) => ['succeeded', 'failed', 'cancelled'].includes(run.state);
const training = (run: RunView) => run.jobs[0]?.state === 'running' && run.jobs[0].progress?.phase === 'training';

async function startLongRun(name: string): Promise<number> {
  // Large enough that training takes several seconds on two cores, so the process can be stopped inside it.
  const res = await api('POST', `/api/teams/${teamId}/runs`, {
    name,
    trainingSetId: setId,
    heldOutSetId: setId,
    patch: { width: 4, height: 4 },
    bits: { from: 7, to: 10 },
    epsilon: 0.000001,
    maxIterations: 300,
  });
  expect(res.status).toBe(201);
  return res.body.run.id;
}

async function codebookSizes(runId: number): Promise<{ size: number; n: number }[]> {
  const rows = (await server.db.knex('codebooks').where({ run_id: runId }).groupBy('size').orderBy('size').select('size').count({ n: '*' })) as { size: number; n: number }[];
  return rows.map((r) => ({ size: Number(r.size), n: Number(r.n) }));
}

beforeAll(async () => {
  // A short lease, so a killed server's job is given up by the queue within seconds of the restart.
  server = await startServer({ SEED_DEMO: 'false', JOB_CONCURRENCY: '1', JOB_LEASE_MS: '3000' });
  const account = await signUpOn(server, { email: `restart-${process.pid}@example.test`, password: 'correct-horse-battery', name: 'Restart Tester', teamName: 'Restart Team' });
  token = account.token;
  teamId = account.team.id;
  setId = (await api('POST', `/api/teams/${teamId}/image-sets`, { name: 'Survey' })).body.imageSet.id;
  const form = new FormData();
  for (const [i, tile] of seabedSet(31, 16, 160, 120).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    form.append('files', new Blob([new Uint8Array(png)], { type: 'image/png' }), `survey-${i}.png`);
  }
  const upload = await fetch(`${server.url}/api/teams/${teamId}/image-sets/${setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${token}` }, body: form });
  expect(upload.status).toBe(201);
  expect((await api('POST', `/api/teams/${teamId}/image-sets/${setId}/split`, { heldOutFraction: 0.125, seed: 3 })).status).toBe(200);
});

afterAll(async () => {
  await server?.stop();
});

describe('jobs across a server restart', () => {
  it('runs a job killed mid-training again from the start and leaves exactly one set of codebooks', async () => {
    const runId = await startLongRun('Killed mid-training');
    await waitForRun(runId, training);
    await server.kill();

    // The crash left the job running and nothing written.
    const [orphan] = await server.db.knex('jobs').where({ run_id: runId }).select('state', 'attempts');
    expect(orphan).toEqual({ state: 'running', attempts: 0 });
    expect(await codebookSizes(runId)).toEqual([]);
    // A stale row for one of the run's sizes, as an earlier attempt might have left: the re-run must replace it.
    await server.db.knex('codebooks').insert({
      team_id: teamId, run_id: runId, bits: 10, size: 1024, dimension: 16, patch_width: 4, patch_height: 4, channels: 1, color: 'luma',
      mean_bits: 0, codewords: Buffer.alloc(1024 * 16 * 4), usage: '[]', trace: '[]', metadata: '{}', distortion: 0, iterations: 0, checksum: '0'.repeat(64), source: 'trained', name: 'stale',
    });

    await server.restart();
    const run = await waitForRun(runId, terminal);
    expect({ state: run.state, error: run.error }).toEqual({ state: 'succeeded', error: null });
    expect(run.jobs.map((j) => [j.kind, j.state, j.attempts])).toEqual([
      ['train', 'succeeded', 1],
      ['evaluate', 'succeeded', 0],
    ]);
    expect(await codebookSizes(runId)).toEqual([128, 256, 512, 1024].map((size) => ({ size, n: 1 })));
    expect(await server.db.knex('codebooks').where({ run_id: runId, name: 'stale' }).count({ n: '*' })).toEqual([{ n: 0 }]);
  });

  it('puts a job stopped by SIGTERM back in the queue uncounted and finishes it after the restart', async () => {
    const runId = await startLongRun('Stopped politely');
    await waitForRun(runId, training);
    const exit = await server.terminate();
    expect(exit.code).toBe(0);

    const [released] = await server.db.knex('jobs').where({ run_id: runId }).select('state', 'attempts');
    expect(released).toEqual({ state: 'queued', attempts: 0 });
    expect(await codebookSizes(runId)).toEqual([]);

    await server.restart();
    const run = await waitForRun(runId, terminal);
    expect(run.state).toBe('succeeded');
    expect(await codebookSizes(runId)).toEqual([128, 256, 512, 1024].map((size) => ({ size, n: 1 })));
  });
});

describe('taking a job', () => {
  it('starts a queued job as it is, counts an interruption for one left running, and fails one interrupted for the third time', async () => {
    const test = await createTestDatabase();
    try {
      const store = createJobStore(wrapKnex(test.knex), { logger: silentLogger });
      const [teamId] = await test.knex('teams').insert({ name: 'Recovery' });
      const insertRunning = async (attempts: number) =>
        (await test.knex('jobs').insert({ team_id: teamId, kind: 'evaluate', state: 'running', attempts, lease_token: 'f'.repeat(32), started_at: new Date() }))[0];
      const fresh = await insertRunning(0);
      const tired = await insertRunning(MAX_ATTEMPTS - 1);
      const idle = (await test.knex('jobs').insert({ team_id: teamId, kind: 'evaluate', state: 'queued' }))[0];
      const done = (await test.knex('jobs').insert({ team_id: teamId, kind: 'evaluate', state: 'succeeded' }))[0];

      expect(await store.pendingIds()).toEqual([fresh, tired, idle]);
      const again = await store.take(fresh);
      expect(again).toMatchObject({ kind: 'taken', job: { id: fresh, state: 'running', attempts: 1 } });
      const ended = await store.take(tired);
      expect(ended).toMatchObject({ kind: 'ended', transition: { state: 'failed' } });
      expect(await store.take(idle)).toMatchObject({ kind: 'taken', job: { id: idle, state: 'running', attempts: 0 } });
      expect(await store.take(done)).toEqual({ kind: 'none' });
      const rows = await test.knex('jobs').orderBy('id').select('id', 'state', 'attempts', 'error');
      expect(rows[1]).toMatchObject({ id: tired, state: 'failed', attempts: MAX_ATTEMPTS });
      expect(rows[1].error).toMatch(/interrupted 3 times/);
    } finally {
      await test.destroy();
    }
  });

  it('refuses every write of an attempt whose job another attempt has taken since', async () => {
    const test = await createTestDatabase();
    try {
      const store = createJobStore(wrapKnex(test.knex), { logger: silentLogger });
      const [teamId] = await test.knex('teams').insert({ name: 'Leases' });
      const id = (await test.knex('jobs').insert({ team_id: teamId, kind: 'evaluate', state: 'queued' }))[0];
      const first = await store.take(id);
      const second = await store.take(id);
      if (first.kind !== 'taken' || second.kind !== 'taken') throw new Error('both takes should start an attempt');
      expect(second.lease).not.toBe(first.lease);

      let wrote = false;
      await expect(store.completeWith(id, first.lease, async () => void (wrote = true))).rejects.toBeInstanceOf(LeaseLostError);
      expect(wrote).toBe(false);
      expect(await store.fail(id, first.lease, 'late')).toMatchObject({ changed: false, state: 'running' });
      expect(await store.heartbeat([{ id, lease: first.lease }])).toEqual({ cancel: [], lost: [id] });

      await store.completeWith(id, second.lease, async (tx) => void (await tx.jobs.findById(id)));
      expect(await test.knex('jobs').where({ id }).first()).toMatchObject({ state: 'succeeded', attempts: 1 });
      // A commit retried after its acknowledgement was lost finds its own work done and does nothing more.
      await store.completeWith(id, second.lease, async () => {
        throw new Error('must not run twice');
      });
    } finally {
      await test.destroy();
    }
  });
});
