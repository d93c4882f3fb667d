// SIGKILL at the worst moments: in the middle of an upload, during training, and as the codebooks are written.
// After a restart on the same database and DATA_DIR, nothing half-stored is visible and nothing acknowledged is lost.
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seabedSet } from '../../../server/seed/seabed-tiles';
import { signUpOn, startServer, type StartedServer } from '../../helpers/server';

let server: StartedServer;
let token: string;
let teamId: number;
let setId: number;
const acknowledgedImages = new Set<number>();

// SHA-256 via node:crypto (FIPS 180-4).
const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

async function api(method: string, p: string, body?: unknown) {
  const res = await fetch(`${server.url}${p}`, {
    method,
    headers: { Authorization: `Bearer ${token}`, ...(body === undefined ? {} : { 'Content-Type': 'application/json' }) },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await res.text();
  return { status: res.status, body: (text ? JSON.parse(text) : null) as Record<string, { id: number }> };
}

async function tiles(seed: number, count: number, width: number, height: number): Promise<Buffer[]> {
  return Promise.all(
    seabedSet(seed, count, width, height).map((t) => sharp(Buffer.from(t.rgb), { raw: { width: t.width, height: t.height, channels: 3 } }).png().toBuffer()),
  );
}

async function uploadNow(files: Buffer[], prefix: string): Promise<number[]> {
  const form = new FormData();
  files.forEach((f, i) => form.append('files', new Blob([new Uint8Array(f)], { type: 'image/png' }), `${prefix}-${i}.png`));
  const res = await fetch(`${server.url}/api/teams/${teamId}/image-sets/${setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${token}` }, body: form });
  expect(res.status).toBe(201);
  const ids = ((await res.json()) as { images: { id: number }[] }).images.map((i) => i.id);
  ids.forEach((id) => acknowledgedImages.add(id));
  return ids;
}

/** Every images row has its object, whose bytes hash to the row's sha256; no stray object under a wrong name. */
async function expectStoreConsistent() {
  const dataDir = server.env.DATA_DIR;
  const rows = (await server.db.knex('images').select('id', 'sha256', 'bytes')) as { id: number; sha256: string; bytes: number }[];
  for (const r of rows) {
    const file = path.join(dataDir, 'objects', r.sha256.slice(0, 2), r.sha256);
    expect(existsSync(file), `image ${r.id} has no object`).toBe(true);
    const data = readFileSync(file);
    expect(sha256(data)).toBe(r.sha256);
    expect(data.length).toBe(r.bytes);
  }
  const objectsDir = path.join(dataDir, 'objects');
  for (const fan of existsSync(objectsDir) ? readdirSync(objectsDir) : []) {
    // Temporaries are dot-files by design; anything else must be a whole object under its own hash.
    for (const name of readdirSync(path.join(objectsDir, fan)).filter((n) => !n.startsWith('.'))) {
      expect(sha256(readFileSync(path.join(objectsDir, fan, name)))).toBe(name);
    }
  }
  const ids = new Set(rows.map((r) => r.id));
  for (const id of acknowledgedImages) expect(ids.has(id), `acknowledged image ${id} was lost`).toBe(true);
}

/** Every codebook's checksum is the SHA-256 of its stored float32 codewords, and a run keeps at most one per size. */
async function expectCodebooksConsistent() {
  const rows = (await server.db.knex('codebooks').select('id', 'run_id', 'size', 'dimension', 'checksum', 'codewords')) as {
    id: number;
    run_id: number | null;
    size: number;
    dimension: number;
    checksum: string;
    codewords: Buffer;
  }[];
  for (const c of rows) {
    expect(c.codewords.length).toBe(c.size * c.dimension * 4);
    expect(sha256(c.codewords), `codebook ${c.id}`).toBe(c.checksum);
  }
  const perRunSize = new Map<string, number>();
  for (const c of rows) if (c.run_id !== null) perRunSize.set(`${c.run_id}/${c.size}`, (perRunSize.get(`${c.run_id}/${c.size}`) ?? 0) + 1);
  expect([...perRunSize.values()].every((n) => n === 1)).toBe(true);
  return rows;
}

type RunView = { state: string; error: string | null; jobs: { kind: string; state: string; error: string | null; progress: { phase: string; fraction?: number } | null }[] };

async function waitForRun(runId: number, done: (run: RunView) => boolean, timeoutMs = 240_000): Promise<RunView> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const res = await api('GET', `/api/teams/${teamId}/runs/${runId}`);
    if (res.status === 200 && done(res.body.run as unknown as RunView)) return res.body.run as unknown as RunView;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`run ${runId} never reached the awaited state`);
}
const terminal = (run: RunView) => ['succeeded', 'failed', 'cancelled'].includes(run.state);

/** Resolves when the run's event stream reports a progress event the predicate accepts. */
function whenProgress(runId: number, accept: (p: { phase: string; fraction?: number }) => boolean): { promise: Promise<void>; stop: () => void } {
  const controller = new AbortController();
  const promise = (async () => {
    const res = await fetch(`${server.url}/api/teams/${teamId}/runs/${runId}/events`, { headers: { Authorization: `Bearer ${token}` }, signal: controller.signal });
    const reader = res.body!.getReader();
    const decoder = new TextDecoder();
    let buffer = '';
    for (;;) {
      const { value, done } = await reader.read();
      if (done) throw new Error('the event stream ended before the awaited progress');
      buffer += decoder.decode(value, { stream: true });
      let at: number;
      while ((at = buffer.indexOf('\n\n')) >= 0) {
        const block = buffer.slice(0, at);
        buffer = buffer.slice(at + 2);
        const data = block.split('\n').find((l) => l.startsWith('data: '));
        if (!block.includes('event: progress') || !data) continue;
        const event = JSON.parse(data.slice(6)) as { progress: { phase: string; fraction?: number } };
        if (accept(event.progress)) {
          controller.abort();
          return;
        }
      }
    }
  })();
  return { promise, stop: () => controller.abort() };
}

beforeAll(async () => {
  server = await startServer({ SEED_DEMO: 'false', JOB_CONCURRENCY: '1' });
  const account = await signUpOn(server, { email: `crash-${process.pid}@example.test`, password: 'correct-horse-battery', name: 'Crash Tester', teamName: 'Crash Team' });
  token = account.token;
  teamId = account.team.id;
  setId = (await api('POST', `/api/teams/${teamId}/image-sets`, { name: 'Survey' })).body.imageSet.id;
  await uploadNow(await tiles(51, 24, 160, 120), 'survey');
  expect((await api('POST', `/api/teams/${teamId}/image-sets/${setId}/split`, { heldOutFraction: 0.125, seed: 3 })).status).toBe(200);
});

afterAll(async () => {
  await server?.stop();
});

describe('a server killed with SIGKILL', () => {
  it('mid-upload keeps no part of the unfinished upload and every acknowledged image', async () => {
    const files = await tiles(77, 40, 256, 192);
    const boundary = `----cw${Date.now()}`;
    const parts = files.map((f, i) =>
      Buffer.concat([Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="files"; filename="late-${i}.png"\r\nContent-Type: image/png\r\n\r\n`), f, Buffer.from('\r\n')]),
    );
    const body = Buffer.concat([...parts, Buffer.from(`--${boundary}--\r\n`)]);
    const rowsBefore = Number(((await server.db.knex('images').count({ n: '*' })) as { n: number }[])[0].n);
    const url = new URL(server.url);
    // Send three quarters of the body, then kill the server while it waits for the rest.
    await new Promise<void>((resolve) => {
      const req = http.request({
        host: url.hostname,
        port: url.port,
        method: 'POST',
        path: `/api/teams/${teamId}/image-sets/${setId}/images`,
        headers: { Authorization: `Bearer ${token}`, 'Content-Type': `multipart/form-data; boundary=${boundary}`, 'Content-Length': body.length },
      });
      req.on('error', () => resolve());
      req.on('response', () => resolve());
      req.write(body.subarray(0, Math.floor(body.length * 0.75)), () => {
        setTimeout(() => void server.kill().then(() => resolve()), 300);
      });
    });
    await server.restart();
    const rowsAfter = Number(((await server.db.knex('images').count({ n: '*' })) as { n: number }[])[0].n);
    // The upload was never acknowledged; none of its files may have become images.
    expect(rowsAfter).toBe(rowsBefore);
    await expectStoreConsistent();
    expect((await api('GET', '/api/health')).status).toBe(200);
  });

  it('during training resumes or fails the job with a reason after the restart, with consistent codebooks', async () => {
    const created = await api('POST', `/api/teams/${teamId}/runs`, {
      name: 'Killed while training',
      trainingSetId: setId,
      heldOutSetId: setId,
      patch: { width: 4, height: 4 },
      bits: { from: 6, to: 9 },
      epsilon: 0.000001,
      maxIterations: 200,
    });
    expect(created.status).toBe(201);
    const runId = created.body.run.id as number;
    await waitForRun(runId, (r) => r.jobs[0]?.state === 'running' && r.jobs[0].progress?.phase === 'training');
    await server.kill();
    await server.restart();
    const run = await waitForRun(runId, terminal);
    if (run.state === 'failed') expect(run.error ?? run.jobs.find((j) => j.error)?.error).toMatch(/\w/);
    else expect(run.state).toBe('succeeded');
    const books = await expectCodebooksConsistent();
    if (run.state === 'succeeded') expect(books.filter((b) => b.run_id === runId).map((b) => b.size).sort((a, b) => a - b)).toEqual([64, 128, 256, 512]);
    await expectStoreConsistent();
  });

  it('as the codebooks are written leaves either the whole set or none, never a part', async () => {
    const created = await api('POST', `/api/teams/${teamId}/runs`, {
      name: 'Killed while saving',
      trainingSetId: setId,
      heldOutSetId: setId,
      patch: { width: 4, height: 4 },
      color: 'rgb',
      bits: { from: 1, to: 10 },
      maxIterations: 3,
    });
    expect(created.status).toBe(201);
    const runId = created.body.run.id as number;
    // The handler announces the write phase on the event bus right before its one transaction.
    const saving = whenProgress(runId, (p) => p.phase === 'saving' || (p.fraction ?? 0) >= 0.97);
    await saving.promise;
    await server.kill();
    const partial = (await server.db.knex('codebooks').where({ run_id: runId }).count({ n: '*' })) as { n: number }[];
    expect([0, 10]).toContain(Number(partial[0].n));
    await server.restart();
    const run = await waitForRun(runId, terminal);
    expect(run.state).toBe('succeeded');
    const books = await expectCodebooksConsistent();
    expect(books.filter((b) => b.run_id === runId).map((b) => b.size).sort((a, b) => a - b)).toEqual([2, 4, 8, 16, 32, 64, 128, 256, 512, 1024]);
  });
});

describe('a worker task that throws', () => {
  it('fails the job with the reason and leaves the server serving', async () => {
    // A stored original damaged on disk after it was accepted: decoding it in the pool thread throws.
    const [victim] = await uploadNow(await tiles(91, 1, 64, 48), 'victim');
    const [row] = (await server.db.knex('images').where({ id: victim }).select('sha256')) as { sha256: string }[];
    writeFileSync(path.join(server.env.DATA_DIR, 'objects', row.sha256.slice(0, 2), row.sha256), Buffer.from('not an image any more'));
    const created = await api('POST', `/api/teams/${teamId}/runs`, {
      name: 'Damaged input',
      trainingImageIds: [victim],
      heldOutImageIds: ((await server.db.knex('images').where({ set_id: setId, role: 'held-out' }).select('id')) as { id: number }[]).map((r) => r.id),
      patch: { width: 4, height: 4 },
      bits: 2,
    });
    expect(created.status, JSON.stringify(created.body)).toBe(201);
    const run = await waitForRun(created.body.run.id, terminal, 60_000);
    expect(run.state).toBe('failed');
    expect(`${run.error} ${run.jobs.map((j) => j.error).join(' ')}`).toMatch(/victim-0\.png|decode|image/i);
    expect((await api('GET', '/api/health')).status).toBe(200);
    expect((await api('GET', `/api/teams/${teamId}/runs`)).status).toBe(200);
  });
});
