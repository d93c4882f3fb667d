// A studio in a server process of its own, signed up and given a set of survey tiles split into training and
// held-out, for tests of jobs across processes, workers and outages.
import sharp from 'sharp';
import { expect } from 'vitest';
import { seabedSet } from '../../server/seed/seabed-tiles';
import type { TestDatabase } from './db';
import { signUpOn, startServer, type StartedServer } from './server';

export interface Studio {
  server: StartedServer;
  token: string;
  teamId: number;
  setId: number;
}

export type RunView = {
  state: string;
  error: string | null;
  jobs: { id: number; kind: string; state: string; attempts: number; progress: { phase: string } | null; servedBy: { workerId: string; host: string }[] }[];
};

export async function call(studio: Studio, method: string, path: string, body?: unknown, base = studio.server.url) {
  const res = await fetch(`${base}${path}`, {
    method,
    headers: { Authorization: `Bearer ${studio.token}`, ...(body === undefined ? {} : { 'Content-Type': 'application/json' }) },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  // eslint-disable-next-line @typescript-eslint/no-explicit-any -- response bodies are checked field by field below
  return { status: res.status, body: (await res.json().catch(() => ({}))) as Record<string, any> };
}

export async function openStudio(env: Record<string, string>, database?: TestDatabase): Promise<Studio> {
  const server = await startServer({ SEED_DEMO: 'false', JOB_CONCURRENCY: '1', JOB_LEASE_MS: '3000', JOB_RECONCILE_MS: '1000', LOG_LEVEL: 'info', ...env }, { database });
  const account = await signUpOn(server, { email: `scale-${process.pid}-${server.port}@example.test`, password: 'correct-horse-battery', name: 'Scale Tester', teamName: 'Scale Team' });
  const studio: Studio = { server, token: account.token, teamId: account.team.id, setId: 0 };
  studio.setId = (await call(studio, 'POST', `/api/teams/${studio.teamId}/image-sets`, { name: 'Survey' })).body.imageSet.id;
  const form = new FormData();
  for (const [i, tile] of seabedSet(41, 12, 160, 120).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    form.append('files', new Blob([new Uint8Array(png)], { type: 'image/png' }), `survey-${i}.png`);
  }
  const upload = await fetch(`${server.url}/api/teams/${studio.teamId}/image-sets/${studio.setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${studio.token}` }, body: form });
  expect(upload.status).toBe(201);
  expect((await call(studio, 'POST', `/api/teams/${studio.teamId}/image-sets/${studio.setId}/split`, { heldOutFraction: 0.25, seed: 5 })).status).toBe(200);
  return studio;
}

export async function createRun(studio: Studio, name: string, bits: { from: number; to: number }, base?: string): Promise<number> {
  const res = await call(studio, 'POST', `/api/teams/${studio.teamId}/runs`, { name, trainingSetId: studio.setId, heldOutSetId: studio.setId, patch: { width: 4, height: 4 }, bits, epsilon: 0.000001, maxIterations: 300 }, base);
  expect(res.status).toBe(201);
  return res.body.run.id;
}

export async function waitForRun(studio: Studio, runId: number, done: (run: RunView) => boolean, base?: string): Promise<RunView> {
  for (let i = 0; i < 3000; i += 1) {
    const res = await call(studio, 'GET', `/api/teams/${studio.teamId}/runs/${runId}`, undefined, base).catch(() => null);
    if (res?.status === 200 && done(res.body.run)) return res.body.run;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`run ${runId} never reached the awaited state`);
}
export const terminal = (run: RunView) => ['succeeded', 'failed', 'cancelled'].includes(run.state);
export const training = (run: RunView) => run.jobs[0]?.state === 'running' && run.jobs[0].progress?.phase === 'training';

export async function codebookSizes(studio: Studio, runId: number): Promise<{ size: number; n: number }[]> {
  const rows = (await studio.server.db.knex('codebooks').where({ run_id: runId }).groupBy('size').orderBy('size').select('size').count({ n: '*' })) as { size: number; n: number }[];
  return rows.map((r) => ({ size: Number(r.size), n: Number(r.n) }));
}

