// `node --import tsx scripts/measure-bodies.ts`: what large bodies cost the server, measured from outside it.
// Runs the real server as a child process on a throwaway database of the MariaDB that DB_HOST/DB_PORT name
// (the development one by default; a cellwright_t_… database, dropped at the end) and a temporary DATA_DIR.
// Memory is the child's resident set from /proc (VmRSS sampled, VmHWM peak reset before each phase):
//  1. an anonymous 64 MB JSON body to the codebook import: time until the answer, memory before and after;
//     the same for a 9 KiB gzip body that inflates to 9 MB;
//  2. MEASURE_UPLOADS (20) concurrent uploads of one ~50 MB PNG each, by as many users: peak memory, time.
// Figures, not a test: it prints them and exits 0 unless something failed outright.
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import http from 'node:http';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { crc32, gzipSync } from 'node:zlib';
import sharp from 'sharp';
import { createTestDatabase, type TestDatabase } from '../tests/helpers/db';
import { signUpOn } from '../tests/helpers/server';

const MB = 1000 * 1000;
const MiB = 1024 * 1024;
const UPLOADS = Number(process.env.MEASURE_UPLOADS ?? 20);
const root = fileURLToPath(new URL('..', import.meta.url));
const say = (m: string) => process.stderr.write(`[measure] ${m}\n`);

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

/** Resident memory of a process in MiB: now, and the peak since the last reset. */
function memoryOf(pid: number): { rss: number; peak: number } {
  const status = readFileSync(`/proc/${pid}/status`, 'utf8');
  const kib = (field: string) => Number(new RegExp(`^${field}:\\s+(\\d+) kB`, 'm').exec(status)?.[1] ?? 0);
  return { rss: kib('VmRSS') / 1024, peak: kib('VmHWM') / 1024 };
}

/** Linux: writing 5 to clear_refs resets the peak resident set (VmHWM) of a process one owns. */
function resetPeak(pid: number): void {
  writeFileSync(`/proc/${pid}/clear_refs`, '5');
}

/** Samples VmRSS every 10 ms until stopped; the highest sample and VmHWM bound the phase's peak from both sides. */
function sampleMemory(pid: number) {
  let max = 0;
  const timer = setInterval(() => {
    try {
      max = Math.max(max, memoryOf(pid).rss);
    } catch {
      clearInterval(timer); // the server is gone; the phase's own error says why
    }
  }, 10);
  return () => {
    clearInterval(timer);
    return Math.max(max, memoryOf(pid).peak);
  };
}

interface Stack {
  base: string;
  server: ChildProcess;
  db: TestDatabase;
  tmp: string;
}

async function startServer(): Promise<Stack> {
  const db = await createTestDatabase({ migrate: false });
  const tmp = mkdtempSync(path.join(tmpdir(), 'cw-measure-'));
  const port = await freePort();
  const env = {
    ...process.env,
    NODE_ENV: 'production',
    HOST: '127.0.0.1',
    PORT: String(port),
    PUBLIC_URL: `http://127.0.0.1:${port}`,
    SMTP_PORT: String(await freePort()),
    DATA_DIR: path.join(tmp, 'data'),
    DB_HOST: db.config.host,
    DB_PORT: String(db.config.port),
    DB_USER: db.config.user,
    DB_PASSWORD: db.config.password,
    DB_NAME: db.name,
    SEED_DEMO: 'false',
    SERVE_CLIENT: 'false',
    BCRYPT_COST: '10',
    LOG_LEVEL: 'warn',
    STORE_SWEEP_INTERVAL_MINUTES: '0',
    // Every upload of the phase at once: the point is what memory does when none is turned away.
    UPLOAD_MAX_CONCURRENT: String(UPLOADS),
    // Every user of the phase signs up from this one address.
    ACCOUNT_RATE_LIMIT: String(UPLOADS * 4),
  };
  const server = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], { cwd: root, env, stdio: ['ignore', 'ignore', 'pipe'] });
  let log = '';
  server.stderr!.on('data', (c: Buffer) => (log = (log + c.toString()).slice(-4000)));
  const base = `http://127.0.0.1:${port}`;
  for (let i = 0; i < 600; i += 1) {
    if (server.exitCode !== null) throw new Error(`server exited early:\n${log}`);
    try {
      if ((await fetch(`${base}/api/health`)).status === 200) return { base, server, db, tmp };
    } catch {
      // not up yet
    }
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error(`server never became healthy:\n${log}`);
}

async function stopServer(s: Stack | undefined): Promise<void> {
  if (!s) return;
  if (s.server.exitCode === null) {
    s.server.kill('SIGTERM');
    await new Promise((r) => {
      const t = setTimeout(() => (s.server.kill('SIGKILL'), r(undefined)), 20_000);
      s.server.once('exit', () => (clearTimeout(t), r(undefined)));
    });
  }
  await s.db.destroy();
  rmSync(s.tmp, { recursive: true, force: true });
}

/** Sends a body in pieces (never holding more than one piece) and resolves when the answer's status line arrives and when it ends. */
function send(base: string, pathname: string, headers: Record<string, string | number>, pieces: () => Generator<Buffer>): Promise<{ status: number; answeredMs: number; doneMs: number }> {
  const url = new URL(pathname, base);
  const started = performance.now();
  return new Promise((resolve, reject) => {
    setTimeout(() => reject(new Error(`no answer within 10 minutes: ${pathname}`)), 600_000).unref();
    let answered = false;
    const req = http.request({ host: url.hostname, port: url.port, path: url.pathname, method: 'POST', headers, agent: false }, (res) => {
      answered = true;
      const answeredMs = performance.now() - started;
      res.resume();
      res.on('end', () => {
        resolve({ status: res.statusCode ?? 0, answeredMs, doneMs: performance.now() - started });
        req.destroy();
      });
    });
    // After the answer, a failed write only means the server stopped listening to the rest: that is the point.
    req.on('error', (err: NodeJS.ErrnoException) => (answered ? undefined : reject(new Error(`no answer: ${err.code ?? err.message} after ${(performance.now() - started).toFixed(0)} ms`))));
    const it = pieces();
    const pump = () => {
      for (;;) {
        if (answered || req.destroyed) return;
        const next = it.next();
        if (next.done) return void req.end();
        if (!req.write(next.value)) return void req.once('drain', pump);
      }
    };
    pump();
  });
}

async function json(base: string, method: string, p: string, token?: string, body?: unknown) {
  const res = await fetch(`${base}${p}`, {
    method,
    headers: { ...(token ? { Authorization: `Bearer ${token}` } : {}), 'Content-Type': 'application/json' },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await res.text();
  if (res.status >= 400) throw new Error(`${method} ${p} → ${res.status} ${text.slice(0, 200)}`);
  return JSON.parse(text);
}

/** A valid JSON document of exactly `total` bytes: a codebook-like array of numbers (JSON whitespace pads it). */
function* jsonDocument(total: number): Generator<Buffer> {
  const head = Buffer.from('{"format":"cellwright-codebook","codewords":[[');
  const end = Buffer.from('1.5]]}');
  const filler = Buffer.from('1.5,'.repeat(MiB / 4));
  const body = total - head.length - end.length;
  let numbers = body - (body % 4);
  yield head;
  while (numbers > 0) {
    const piece = filler.subarray(0, Math.min(filler.length, numbers));
    numbers -= piece.length;
    yield piece;
  }
  yield Buffer.from(' '.repeat(body % 4));
  yield end;
}

async function measureAnonymousBody(s: Stack) {
  const pid = s.server.pid!;
  const path64 = '/api/teams/1/codebooks/import';
  const rows: string[] = [];
  for (let i = 0; i < 3; i += 1) {
    global.gc?.();
    const before = memoryOf(pid).rss;
    resetPeak(pid);
    const stop = sampleMemory(pid);
    const total = 64 * MB;
    const r = await send(s.base, path64, { 'Content-Type': 'application/json', 'Content-Length': total }, () => jsonDocument(total));
    const peak = stop();
    rows.push(`anonymous 64 MB JSON, run ${i + 1}: ${r.status} after ${r.answeredMs.toFixed(1)} ms (connection done ${r.doneMs.toFixed(0)} ms); RSS ${before.toFixed(0)} → ${memoryOf(pid).rss.toFixed(0)} MiB, peak ${peak.toFixed(0)} MiB`);
  }
  const inflated = Buffer.concat([...jsonDocument(9 * MB)]);
  const bomb = gzipSync(inflated, { level: 9 });
  const before = memoryOf(pid).rss;
  resetPeak(pid);
  const stop = sampleMemory(pid);
  const r = await send(s.base, path64, { 'Content-Type': 'application/json', 'Content-Encoding': 'gzip', 'Content-Length': bomb.length }, function* () {
    yield bomb;
  });
  rows.push(
    `anonymous gzip ${(bomb.length / 1024).toFixed(1)} KiB → 9 MB: ${r.status} after ${r.answeredMs.toFixed(1)} ms; RSS ${before.toFixed(0)} → ${memoryOf(pid).rss.toFixed(0)} MiB, peak ${stop().toFixed(0)} MiB`,
  );
  return rows;
}

function pngChunk(type: string, data: Buffer): Buffer {
  const length = Buffer.alloc(4);
  length.writeUInt32BE(data.length);
  const typed = Buffer.concat([Buffer.from(type, 'latin1'), data]);
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(typed) >>> 0);
  return Buffer.concat([length, typed, crc]);
}

/** A 4096×4096 RGB noise PNG, stored without compression: about 50 MB that no upload limit below 50 MiB lets through. */
async function bigPng(): Promise<{ head: Buffer; rest: Buffer }> {
  const side = 4096;
  const pixels = Buffer.alloc(side * side * 3);
  let x = 2463534242;
  for (let i = 0; i < pixels.length; i += 1) {
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    pixels[i] = x & 0xff;
  }
  const png = await sharp(pixels, { raw: { width: side, height: side, channels: 3 } }).png({ compressionLevel: 0 }).toBuffer();
  // Signature (8) and IHDR (25): a tEXt chunk goes after them, so every upload has bytes of its own.
  return { head: png.subarray(0, 33), rest: png.subarray(33) };
}

async function measureUploads(s: Stack) {
  const pid = s.server.pid!;
  say(`signing up ${UPLOADS} users, each with a team and a set`);
  const users: { token: string; teamId: number; setId: number }[] = [];
  for (let i = 0; i < UPLOADS; i += 1) {
    // Sign-up goes through the mailed link, read from the capture server's table.
    const signed = await signUpOn({ url: s.base, db: s.db }, { email: `measure-${i}@example.test`, password: 'correct-horse-battery', name: `Uploader ${i}`, teamName: `Team ${i}` });
    const set = await json(s.base, 'POST', `/api/teams/${signed.team.id}/image-sets`, signed.token, { name: 'Large tiles' });
    users.push({ token: signed.token, teamId: signed.team.id, setId: set.imageSet.id });
  }
  const png = await bigPng();
  const boundary = 'cw-measure-boundary';
  const bodyOf = (i: number) => {
    const text = pngChunk('tEXt', Buffer.from(`Comment\0upload ${i}`, 'latin1'));
    const head = Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="files"; filename="large-${i}.png"\r\nContent-Type: image/png\r\n\r\n`);
    const tail = Buffer.from(`\r\n--${boundary}--\r\n`);
    const parts = [head, png.head, text, png.rest, tail];
    return { length: parts.reduce((n, p) => n + p.length, 0), fileBytes: png.head.length + text.length + png.rest.length, parts };
  };
  global.gc?.();
  await new Promise((r) => setTimeout(r, 500));
  const before = memoryOf(pid).rss;
  resetPeak(pid);
  const stop = sampleMemory(pid);
  const started = performance.now();
  const results = await Promise.all(
    users.map((u, i) => {
      const body = bodyOf(i);
      return send(
        s.base,
        `/api/teams/${u.teamId}/image-sets/${u.setId}/images`,
        { Authorization: `Bearer ${u.token}`, 'Content-Type': `multipart/form-data; boundary=${boundary}`, 'Content-Length': body.length },
        function* () {
          for (const p of body.parts) for (let o = 0; o < p.length; o += 256 * 1024) yield p.subarray(o, o + 256 * 1024);
        },
      );
    }),
  );
  const wall = performance.now() - started;
  const peak = stop();
  const statuses = results.reduce<Record<number, number>>((acc, r) => ((acc[r.status] = (acc[r.status] ?? 0) + 1), acc), {});
  const fileMb = bodyOf(0).fileBytes / MB;
  return [
    `${UPLOADS} concurrent uploads of one ${fileMb.toFixed(1)} MB PNG (4096×4096) each: statuses ${JSON.stringify(statuses)}, all done in ${(wall / 1000).toFixed(1)} s`,
    `  server RSS ${before.toFixed(0)} MiB before, peak ${peak.toFixed(0)} MiB during, ${memoryOf(pid).rss.toFixed(0)} MiB after (${((UPLOADS * fileMb * MB) / MiB).toFixed(0)} MiB were uploaded)`,
  ];
}

async function main(): Promise<number> {
  let stack: Stack | undefined;
  try {
    stack = await startServer();
    say(`server pid ${stack.server.pid} on ${stack.base}`);
    const phase = process.env.MEASURE_PHASE ?? 'all';
    const lines: string[] = [];
    if (phase !== 'uploads') lines.push(...(await measureAnonymousBody(stack)));
    if (phase !== 'body') lines.push(...(await measureUploads(stack)));
    process.stdout.write(`${lines.join('\n')}\n`);
    return 0;
  } catch (err) {
    process.stderr.write(`measure: error: ${err instanceof Error ? err.message : String(err)}\n`);
    return 1;
  } finally {
    await stopServer(stack);
  }
}

void main().then((code) => process.exit(code));
