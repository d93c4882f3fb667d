// `npm run load`: the studio under load, against 127.0.0.1 only and bounded in time.
// Starts its own MariaDB (scripts/db.sh, temporary DB_DIR, free port) and server, builds a team with trained
// results, measures 50 signed-in clients over the read endpoints with the engine idle (10 s, a baseline), then
// starts a long training run and drives them again for 30 s, then 20 concurrent uploads. Prints a table; exits 1 when a target is missed:
//   zero errors, and p99 latency of reads below 200 ms while training runs.
import { spawn, type ChildProcess, execFile } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import autocannon from 'autocannon';
import sharp from 'sharp';
import { loadConfig } from '../server/config';
import { seabedSet } from '../server/seed/seabed-tiles';
import { readCapturedMail } from './mail';

const TARGET_P99_MS = 200;
const READ_CLIENTS = Number(process.env.LOAD_CLIENTS ?? 50);
const READ_SECONDS = Number(process.env.LOAD_SECONDS ?? 30);
const BASELINE_SECONDS = Number(process.env.LOAD_BASELINE_SECONDS ?? 10);
const UPLOADS = Number(process.env.LOAD_UPLOADS ?? 20);
const PASSWORD = 'correct-horse-battery';

const root = fileURLToPath(new URL('..', import.meta.url));
const run = promisify(execFile);
const say = (m: string) => process.stderr.write(`[load] ${m}\n`);

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.on('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

interface Env {
  base: string;
  dbEnv: Record<string, string>;
  server: ChildProcess;
  tmp: string;
}

async function startStack(): Promise<Env> {
  const tmp = mkdtempSync(path.join(tmpdir(), 'cw-load-'));
  const dbEnv = { DB_DIR: path.join(tmp, 'db'), DB_PORT: String(await freePort()), DB_HOST: '127.0.0.1', DB_NAME: 'cellwright_load', DB_USER: 'cellwright', DB_PASSWORD: 'load-test' };
  say(`starting MariaDB on 127.0.0.1:${dbEnv.DB_PORT}`);
  await run('bash', [path.join(root, 'scripts/db.sh'), 'start'], { env: { ...process.env, ...dbEnv }, timeout: 120_000 });
  const port = await freePort();
  const env = {
    ...process.env,
    ...dbEnv,
    NODE_ENV: 'production',
    HOST: '127.0.0.1',
    PORT: String(port),
    SMTP_PORT: String(await freePort()),
    PUBLIC_URL: `http://127.0.0.1:${port}`,
    DATA_DIR: path.join(tmp, 'data'),
    SEED_DEMO: 'false',
    SERVE_CLIENT: 'false',
    BCRYPT_COST: '10',
    LOG_LEVEL: 'warn',
    JOB_CONCURRENCY: '1',
    // One engine thread for the background training leaves the other core to the request loop.
    ENGINE_THREADS: '1',
    LOGIN_RATE_LIMIT: '1000',
    ACCOUNT_RATE_LIMIT: '1000',
    // The upload phase sends UPLOADS at once with one account; the caps would otherwise turn most away with 429.
    UPLOAD_MAX_CONCURRENT: String(UPLOADS),
    UPLOAD_MAX_CONCURRENT_PER_USER: String(UPLOADS),
  };
  // LOAD_CPU_PROF=DIR writes a V8 CPU profile of the server there when it stops (for finding the hot path).
  const profile = process.env.LOAD_CPU_PROF ? ['--cpu-prof', `--cpu-prof-dir=${path.resolve(process.env.LOAD_CPU_PROF)}`] : [];
  const server = spawn(process.execPath, [...profile, '--import', 'tsx', 'server/index.ts'], { cwd: root, env, stdio: ['ignore', 'ignore', 'pipe'] });
  let log = '';
  server.stderr!.on('data', (c: Buffer) => (log = (log + c.toString()).slice(-4000)));
  const base = `http://127.0.0.1:${port}`;
  for (let i = 0; i < 600; i += 1) {
    if (server.exitCode !== null) throw new Error(`server exited early:\n${log}`);
    try {
      if ((await fetch(`${base}/api/health`)).status === 200) return { base, dbEnv, server, tmp };
    } catch {
      // not up yet
    }
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error(`server never became healthy:\n${log}`);
}

async function stopStack(e: Env | undefined): Promise<void> {
  if (!e) return;
  if (e.server.exitCode === null) {
    e.server.kill('SIGTERM');
    await new Promise((r) => {
      const t = setTimeout(() => (e.server.kill('SIGKILL'), r(undefined)), 20_000);
      e.server.once('exit', () => (clearTimeout(t), r(undefined)));
    });
  }
  await run('bash', [path.join(root, 'scripts/db.sh'), 'stop'], { env: { ...process.env, ...e.dbEnv } }).catch(() => undefined);
  rmSync(e.tmp, { recursive: true, force: true });
}

async function json(base: string, method: string, p: string, token?: string, body?: unknown) {
  const res = await fetch(`${base}${p}`, {
    method,
    headers: { ...(token ? { Authorization: `Bearer ${token}` } : {}), ...(body === undefined ? {} : { 'Content-Type': 'application/json' }) },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await res.text();
  if (res.status >= 400) throw new Error(`${method} ${p} → ${res.status} ${text.slice(0, 300)}`);
  return text ? JSON.parse(text) : null;
}

const pngs = (seed: number, count: number, w: number, h: number) =>
  Promise.all(seabedSet(seed, count, w, h).map((t) => sharp(Buffer.from(t.rgb), { raw: { width: t.width, height: t.height, channels: 3 } }).png().toBuffer()));

async function upload(base: string, token: string, teamId: number, setId: number, files: Buffer[], prefix: string): Promise<{ status: number; ms: number; ids: number[] }> {
  const form = new FormData();
  files.forEach((f, i) => form.append('files', new Blob([new Uint8Array(f)], { type: 'image/png' }), `${prefix}-${i}.png`));
  const started = performance.now();
  const res = await fetch(`${base}/api/teams/${teamId}/image-sets/${setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${token}` }, body: form });
  const body = (await res.json()) as { images?: { id: number }[] };
  return { status: res.status, ms: performance.now() - started, ids: (body.images ?? []).map((i) => i.id) };
}

async function waitForRun(base: string, token: string, teamId: number, runId: number, done: (r: { state: string; jobs: { state: string; progress: { phase: string } | null }[] }) => boolean) {
  for (let i = 0; i < 3000; i += 1) {
    const { run: r } = await json(base, 'GET', `/api/teams/${teamId}/runs/${runId}`, token);
    if (done(r)) return r;
    if (['failed', 'cancelled'].includes(r.state)) throw new Error(`run ${runId} ended ${r.state}: ${r.error}`);
    await new Promise((res) => setTimeout(res, 200));
  }
  throw new Error(`run ${runId} never reached the awaited state`);
}

/** The newest captured mail for an address whose text holds a `/<kind>/<token>` link, as the operator's `npm run mail` reads it. */
async function mailedToken(dbEnv: Record<string, string>, to: string, kind: string): Promise<string> {
  const config = loadConfig({ ...dbEnv, JWT_SECRET: 'x'.repeat(32) });
  for (let i = 0; i < 150; i += 1) {
    const messages = await readCapturedMail(config, { to, last: 5 });
    const link = messages.map((m) => new RegExp(`/${kind}/([A-Za-z0-9_-]+)`).exec(m.text)).findLast(Boolean);
    if (link) return link[1];
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error(`no /${kind}/ mail for ${to}`);
}

/** A team with an admin and READ_CLIENTS viewers (one session each), a set of tiles, and one finished run. */
async function buildTeam(base: string, dbEnv: Record<string, string>) {
  await json(base, 'POST', '/api/auth/signup', undefined, { email: 'load-admin@example.test' });
  const signupToken = await mailedToken(dbEnv, 'load-admin@example.test', 'sign-up');
  const admin = await json(base, 'POST', '/api/auth/signup/complete', undefined, { token: signupToken, password: PASSWORD, name: 'Load Admin', teamName: 'Load Team' });
  const token = admin.token as string;
  const teamId = admin.team.id as number;
  const setId = (await json(base, 'POST', `/api/teams/${teamId}/image-sets`, token, { name: 'Seabed' })).imageSet.id as number;
  const first = await upload(base, token, teamId, setId, await pngs(5, 24, 160, 120), 'seabed');
  if (first.status !== 201) throw new Error(`seed upload answered ${first.status}`);
  await json(base, 'POST', `/api/teams/${teamId}/image-sets/${setId}/split`, token, { heldOutFraction: 0.25, seed: 1 });
  // The background run trains on a larger set of its own: on the small one a faster engine finished the sweep before
  // the read phase ended, and the reads were then partly measured with the engine idle.
  const bigSetId = (await json(base, 'POST', `/api/teams/${teamId}/image-sets`, token, { name: 'Seabed, large' })).imageSet.id as number;
  const big = await upload(base, token, teamId, bigSetId, await pngs(9, 24, 320, 240), 'seabed-large');
  if (big.status !== 201) throw new Error(`large set upload answered ${big.status}`);
  const done = (await json(base, 'POST', `/api/teams/${teamId}/runs`, token, { name: 'Finished sweep', trainingSetId: setId, heldOutSetId: setId, patch: { width: 4, height: 4 }, bits: { from: 1, to: 6 }, maxIterations: 20 })).run.id as number;
  say('training a first run to have curves and codebooks to read');
  const finished = await waitForRun(base, token, teamId, done, (r) => r.state === 'succeeded');
  const codebookId = (finished.codebooks as { id: number }[]).at(-1)!.id;

  say(`inviting ${READ_CLIENTS} viewers`);
  const viewers: string[] = [];
  for (let i = 0; i < READ_CLIENTS; i += 1) {
    const email = `load-viewer-${i}@example.test`;
    await json(base, 'POST', `/api/teams/${teamId}/invitations`, token, { email, role: 'viewer' });
  }
  // The team's own Outbox shows its invitations, links included, once the queue has delivered them.
  let messages: { to: string; text: string | null; status: string }[] = [];
  for (let i = 0; i < 150 && messages.filter((m) => m.status === 'sent').length < READ_CLIENTS; i += 1) {
    if (i > 0) await new Promise((r) => setTimeout(r, 200));
    messages = ((await json(base, 'GET', `/api/teams/${teamId}/outbox`, token)) as { messages: typeof messages }).messages;
  }
  for (let i = 0; i < READ_CLIENTS; i += 1) {
    const email = `load-viewer-${i}@example.test`;
    const m = messages.find((x) => x.to === email);
    const link = m && /\/invite\/([A-Za-z0-9_-]+)/.exec(m.text ?? '');
    if (!link) throw new Error(`no invitation mail for ${email}`);
    viewers.push((await json(base, 'POST', `/api/invitations/${link[1]}/accept`, undefined, { name: `Viewer ${i}`, password: PASSWORD })).token as string);
  }
  return { token, teamId, setId, bigSetId, runId: done, codebookId, imageIds: first.ids, viewers };
}

function row(cells: (string | number)[]): string {
  return cells.map((c, i) => String(c).padEnd(i === 0 ? 34 : 12)).join('');
}

async function main(): Promise<number> {
  let stack: Env | undefined;
  try {
    stack = await startStack();
    const { base } = stack;
    const team = await buildTeam(base, stack.dbEnv);

    const t = `/api/teams/${team.teamId}`;
    const paths = [`${t}/runs`, `${t}/runs/${team.runId}/curve`, `${t}/codebooks/${team.codebookId}`, ...team.imageIds.slice(0, 6).map((id) => `${t}/images/${id}/thumbnail`)];
    let next = 0;
    const requests: autocannon.Request[] = paths.map((p, i) => ({
      method: 'GET' as const,
      path: p,
      // Each connection is one viewer: it takes its own session on its first request and keeps it.
      setupRequest: (req: autocannon.Request, ctx: object) => {
        const context = ctx as { token?: string };
        if (i === 0 && context.token === undefined) context.token = team.viewers[next++ % team.viewers.length];
        return { ...req, headers: { ...(req.headers ?? {}), Authorization: `Bearer ${context.token ?? team.viewers[0]}` } };
      },
    }));

    if (process.env.LOAD_PER_ROUTE) {
      // Diagnosis: each read endpoint alone for a few seconds, to see which one sets the tail.
      for (const r of requests.slice(0, 4)) {
        const one = await autocannon({ url: base, connections: READ_CLIENTS, duration: 4, requests: [r], timeout: 10 });
        process.stdout.write(`${row([String(r.path).replace(t, '…'), one.requests.total, one.requests.average.toFixed(0), one.latency.p50, one.latency.p99, one.latency.max, one.non2xx + one.errors])}\n`);
      }
    }

    // A baseline with the engine idle, so the figures under training can be read against it.
    say(`baseline: ${READ_CLIENTS} clients read for ${BASELINE_SECONDS} s with no job running`);
    const idle = await autocannon({ url: base, connections: READ_CLIENTS, duration: BASELINE_SECONDS, requests, timeout: 10 });

    // The background load: a large sweep that keeps the engine busy through both phases.
    const bg = (await json(base, 'POST', `/api/teams/${team.teamId}/runs`, team.token, {
      name: 'Background training', trainingSetId: team.bigSetId, heldOutSetId: team.setId, patch: { width: 4, height: 4 }, color: 'rgb', bits: { from: 8, to: 12 }, epsilon: 0.0000001, maxIterations: 1000,
    })).run.id as number;
    await waitForRun(base, team.token, team.teamId, bg, (r) => r.jobs[0]?.state === 'running' && r.jobs[0].progress?.phase === 'training');
    say(`training run ${bg} is running; ${READ_CLIENTS} clients read for ${READ_SECONDS} s`);
    const reads = await autocannon({ url: base, connections: READ_CLIENTS, duration: READ_SECONDS, requests, timeout: 10 });
    const bgAfter = (await json(base, 'GET', `${t}/runs/${bg}`, team.token)).run as { state: string; jobs: { state: string }[] };
    const stillTraining = bgAfter.jobs[0]?.state === 'running';
    if (!stillTraining) say(`background run ended the read phase ${bgAfter.state} (training job ${bgAfter.jobs[0]?.state})`);

    say(`${UPLOADS} concurrent uploads`);
    const batches = await Promise.all(Array.from({ length: UPLOADS }, (_, i) => pngs(1000 + i, 2, 128, 96)));
    const started = performance.now();
    const uploads = await Promise.all(batches.map((files, i) => upload(base, team.token, team.teamId, team.setId, files, `load-${i}`)));
    const uploadWall = performance.now() - started;
    const uploadMs = uploads.map((u) => u.ms).sort((a, b) => a - b);
    const uploadErrors = uploads.filter((u) => u.status !== 201).length;
    await json(base, 'POST', `${t}/runs/${bg}/cancel`, team.token).catch(() => undefined);

    const readErrors = reads.errors + reads.timeouts + reads.non2xx;
    const pct = (q: number) => uploadMs[Math.min(uploadMs.length - 1, Math.ceil(q * uploadMs.length) - 1)];
    const lines = [
      row(['phase', 'requests', 'req/s', 'p50 ms', 'p99 ms', 'max ms', 'errors']),
      row([`reads, idle engine, ${BASELINE_SECONDS} s`, idle.requests.total, idle.requests.average.toFixed(0), idle.latency.p50, idle.latency.p99, idle.latency.max, idle.errors + idle.timeouts + idle.non2xx]),
      row([`reads while training, ${READ_SECONDS} s`, reads.requests.total, reads.requests.average.toFixed(0), reads.latency.p50, reads.latency.p99, reads.latency.max, readErrors]),
      row([`uploads, ${UPLOADS} at once (2 PNGs each)`, UPLOADS, (UPLOADS / (uploadWall / 1000)).toFixed(1), pct(0.5).toFixed(0), pct(0.99).toFixed(0), uploadMs.at(-1)!.toFixed(0), uploadErrors]),
    ];
    process.stdout.write(`\n${lines.join('\n')}\n\ntraining was ${stillTraining ? 'still running' : 'no longer running'} at the end of the read phase\n`);

    const missed: string[] = [];
    if (readErrors > 0) missed.push(`${readErrors} read errors (target 0)`);
    if (uploadErrors > 0) missed.push(`${uploadErrors} upload errors (target 0)`);
    if (reads.latency.p99 >= TARGET_P99_MS) missed.push(`read p99 ${reads.latency.p99} ms (target < ${TARGET_P99_MS} ms)`);
    if (!stillTraining) missed.push('training finished before the read phase ended, so the reads were not measured under training');
    if (missed.length > 0) {
      process.stdout.write(`targets missed: ${missed.join('; ')}\n`);
      return 1;
    }
    process.stdout.write('all targets met\n');
    return 0;
  } catch (err) {
    process.stderr.write(`load: error: ${err instanceof Error ? err.message.split('\n')[0] : String(err)}\n`);
    return 1;
  } finally {
    await stopStack(stack);
  }
}

void main().then((code) => process.exit(code));
