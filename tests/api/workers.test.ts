// Compute workers that join a studio: real worker processes (npm run worker's entry), a real server process, real
// Redis and MariaDB. The studio here computes nothing itself (WORKER_IN_SERVER=false), so every task is a worker's.
import { execFile } from 'node:child_process';
import path from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startWorkerProcess, type WorkerProcess } from '../helpers/worker-process';
import { call, codebookSizes, createRun, openStudio, terminal, waitForRun, type Studio } from '../helpers/studio-process';

const run = promisify(execFile);
let studio: Studio;
const workers: WorkerProcess[] = [];

beforeAll(async () => {
  studio = await openStudio({ WORKER_IN_SERVER: 'false' });
});

afterAll(async () => {
  for (const w of workers) await w.kill();
  await studio?.server.stop();
});

type WorkersView = { workers: { workerId: string; host: string; threads: number; lastBeat: string; task: { kind: string; jobId: number | null } | null }[]; queue: Record<string, number> };

async function workersPage(): Promise<WorkersView> {
  const res = await call(studio, 'GET', `/api/teams/${studio.teamId}/workers`);
  expect(res.status).toBe(200);
  return res.body as WorkersView;
}

async function checksums(runId: number): Promise<string[]> {
  const rows = (await studio.server.db.knex('codebooks').where({ run_id: runId }).orderBy('size').select('checksum')) as { checksum: string }[];
  return rows.map((r) => r.checksum);
}

/** Each codebook's pooled figures on the held-out images, by size. */
async function evaluations(runId: number): Promise<unknown[]> {
  const rows = (await studio.server.db
    .knex('evaluations as e')
    .join('codebooks as c', 'c.id', 'e.codebook_id')
    .where('c.run_id', runId)
    .orderBy('c.size')
    .select('c.size', 'e.overall')) as { size: number; overall: unknown }[];
  return rows.map((r) => [r.size, typeof r.overall === 'string' ? JSON.parse(r.overall) : r.overall]);
}

describe('workers that join', () => {
  it('lists the workers that joined with their threads, and runs a job on them', async () => {
    workers.push(await startWorkerProcess(studio.server), await startWorkerProcess(studio.server));
    const page = await workersPage();
    expect(page.workers).toHaveLength(2);
    expect(page.workers.every((w) => w.threads === 1 && w.task === null)).toBe(true);

    const runId = await createRun(studio, 'On joined workers', { from: 4, to: 6 });
    const done = await waitForRun(studio, runId, terminal);
    expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
    const ids = new Set(page.workers.map((w) => w.workerId));
    for (const job of done.jobs) {
      expect(job.servedBy.length).toBeGreaterThan(0);
      for (const w of job.servedBy) expect(ids.has(w.workerId)).toBe(true);
    }
    expect(await codebookSizes(studio, runId)).toEqual([16, 32, 64].map((size) => ({ size, n: 1 })));
  });

  it('finishes a run whose worker is killed mid-training on another worker, with the same codebooks', async () => {
    const reference = await createRun(studio, 'Reference', { from: 7, to: 8 });
    await waitForRun(studio, reference, terminal);

    const runId = await createRun(studio, 'Worker lost', { from: 7, to: 8 });
    // Wait until a worker holds the training task, then kill that worker outright.
    let holder: string | undefined;
    for (let i = 0; i < 600 && !holder; i += 1) {
      const page = await workersPage();
      holder = page.workers.find((w) => w.task?.kind === 'train')?.workerId;
      if (!holder) await new Promise((r) => setTimeout(r, 100));
    }
    expect(holder).toBeDefined();
    const victim = workers.find((w) => w.output().includes(holder!));
    expect(victim).toBeDefined();
    await victim!.kill();

    const done = await waitForRun(studio, runId, terminal);
    expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
    expect(done.jobs[0].servedBy.map((w) => w.workerId)).not.toContain(holder);
    // The task was computed again from the start elsewhere: same images, same seed, same codewords to the bit.
    expect(await checksums(runId)).toEqual(await checksums(reference));
    // Its evaluation was measured in image groups by whichever workers were there, and pools to the same figures.
    expect(await evaluations(runId)).toEqual(await evaluations(reference));
    // The killed worker leaves the list once its heartbeat lapses (three missed beats).
    let listed = true;
    for (let i = 0; i < 150 && listed; i += 1) {
      listed = (await workersPage()).workers.some((w) => w.workerId === holder);
      if (listed) await new Promise((r) => setTimeout(r, 100));
    }
    expect(listed).toBe(false);
  });
});

describe('cancelling', () => {
  it('stops the worker computing a cancelled run on the cancellation message, not when the task would have ended', async () => {
    const runId = await createRun(studio, 'Cancelled on a worker', { from: 9, to: 10 });
    let busy: string | undefined;
    for (let i = 0; i < 600 && !busy; i += 1) {
      busy = (await workersPage()).workers.find((w) => w.task?.kind === 'train')?.workerId;
      if (!busy) await new Promise((r) => setTimeout(r, 100));
    }
    expect(busy).toBeDefined();
    expect((await call(studio, 'POST', `/api/teams/${studio.teamId}/runs/${runId}/cancel`)).status).toBe(200);
    expect((await waitForRun(studio, runId, terminal)).state).toBe('cancelled');
    const worker = workers.find((w) => w.output().includes(busy!))!;
    let log = '';
    for (let i = 0; i < 100 && !log.includes('"task cancelled by the studio"'); i += 1) {
      log = worker.output();
      await new Promise((r) => setTimeout(r, 50));
    }
    // The worker dropped the task when the message came (its latency is measured by npm run bench), and its
    // next heartbeat shows it idle; nothing of the run was written.
    expect(log).toContain('"task cancelled by the studio"');
    let idle = false;
    for (let i = 0; i < 100 && !idle; i += 1) {
      idle = (await workersPage()).workers.find((w) => w.workerId === busy)?.task === null;
      if (!idle) await new Promise((r) => setTimeout(r, 100));
    }
    expect(idle).toBe(true);
    expect(await codebookSizes(studio, runId)).toEqual([]);
  });
});

describe('what a worker may reach', () => {
  const internal = (p: string, token: string | null, init: RequestInit = {}) =>
    fetch(`${studio.server.url}/internal/v1${p}`, { ...init, headers: { ...(token ? { Authorization: `Bearer ${token}` } : {}), 'Content-Type': 'application/json', ...(init.headers ?? {}) } });
  const register = (token: string | null) => internal('/workers', token, { method: 'POST', body: JSON.stringify({ host: 'probe', threads: 1 }) });
  const tokenFile = () => path.join(studio.server.env.DATA_DIR, 'secrets', 'worker-token');
  const readToken = async () => (await import('node:fs/promises')).readFile(tokenFile(), 'utf8').then((t) => t.trim());
  const someDigest = async () => ((await studio.server.db.knex('images').first('sha256')) as { sha256: string }).sha256;

  it('refuses to admit a worker without the current token, and a user\u2019s session as a worker token', async () => {
    expect((await register(null)).status).toBe(401);
    expect((await register('not-the-token-but-long-enough-to-look-like-one')).status).toBe(401);
    expect((await register(studio.token)).status).toBe(401);
    const admitted = await register(await readToken());
    expect(admitted.status).toBe(201);
  });

  it('serves an original only to a worker whose current task names it, and never to a user\u2019s session', async () => {
    const { session } = (await (await register(await readToken())).json()) as { session: string };
    const digest = await someDigest();
    // An idle worker holds no task: no grant, whatever the digest.
    expect((await internal(`/originals/${digest}`, session)).status).toBe(403);
    expect((await internal(`/originals/${digest}`, studio.token)).status).toBe(401);
    expect((await internal(`/originals/${digest}`, null)).status).toBe(401);
    // And a worker session opens nothing under /api.
    const api = await fetch(`${studio.server.url}/api/teams/${studio.teamId}/runs`, { headers: { Authorization: `Bearer ${session}` } });
    expect(api.status).toBe(401);
  });

  it('refuses malformed registrations with 400 in the error shape, never a 5xx', async () => {
    const token = await readToken();
    const bodies = ['{"host":', 'null', '[]', '{"host":"x","threads":"8"}', '{"host":"","threads":1}', '{"host":"x","threads":1e999}', '{"host":"x","threads":1,"extra":true}', `{"host":"${'h'.repeat(1000)}","threads":1}`, '{"__proto__":{"admin":true},"host":"x","threads":1}'];
    for (const body of bodies) {
      const res = await internal('/workers', token, { method: 'POST', body });
      expect(res.status, body).toBe(400);
      expect(((await res.json()) as { error: { code: string } }).error.code).toBeTypeOf('string');
    }
    expect((await internal('/originals/not-a-digest', await readToken())).status).toBe(401);
  });

  it('refuses the old token and ends every worker session once the token is rotated', async () => {
    const old = await readToken();
    const { session } = (await (await register(old)).json()) as { session: string };
    await run(process.execPath, ['--import', 'tsx', 'scripts/worker-token.ts', 'rotate'], { cwd: path.resolve(__dirname, '../..'), env: { ...process.env, ...studio.server.env } });
    const fresh = await readToken();
    expect(fresh).not.toBe(old);
    expect((await register(old)).status).toBe(401);
    expect((await internal(`/originals/${await someDigest()}`, session)).status).toBe(401);
    expect((await register(fresh)).status).toBe(201);
  });
});
