import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { createTestDatabase, type TestDatabase } from './db';
import { getFreePort } from './ports';

const repoRoot = fileURLToPath(new URL('../..', import.meta.url));

export interface StartedServer {
  url: string;
  port: number;
  /** The full environment the process was started with. */
  env: Record<string, string>;
  /** The server's database (created empty; the server migrates it). */
  db: TestDatabase;
  /** Everything the process wrote to stdout and stderr so far. */
  output(): string;
  /** SIGTERM, wait for exit, drop the database, remove DATA_DIR; resolves with the exit status. */
  stop(): Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  /** SIGKILL, as a crash would; keeps the database and DATA_DIR for restart(). */
  kill(): Promise<void>;
  /** SIGTERM, as an orderly stop would; keeps the database and DATA_DIR for restart(). */
  terminate(): Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  /** Starts the process again with the same environment (after kill()). */
  restart(): Promise<void>;
  /**
   * Starts a second server process on the same database, DATA_DIR and Redis (its own HTTP and SMTP ports), as a
   * studio scaled to two machines would run; stopped by the returned handle or when this server stops.
   */
  peer(): Promise<ServerPeer>;
}

export interface ServerPeer {
  url: string;
  output(): string;
  kill(): Promise<void>;
  terminate(): Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

function waitForExit(child: ChildProcess, timeoutMs: number): Promise<{ code: number | null; signal: NodeJS.Signals | null }> {
  if (child.exitCode !== null || child.signalCode !== null) {
    return Promise.resolve({ code: child.exitCode, signal: child.signalCode });
  }
  return new Promise((resolve) => {
    const timer = setTimeout(() => child.kill('SIGKILL'), timeoutMs);
    child.once('exit', (code, signal) => {
      clearTimeout(timer);
      resolve({ code, signal });
    });
  });
}

async function waitForHealth(url: string, child: ChildProcess, output: () => string, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    if (child.exitCode !== null || child.signalCode !== null) {
      throw new Error(`server exited (${child.exitCode ?? child.signalCode}) before it was healthy:\n${output()}`);
    }
    try {
      const res = await fetch(`${url}/api/health`, { signal: AbortSignal.timeout(2_000) });
      if (res.status === 200) return;
    } catch {
      // not listening yet
    }
    await new Promise((r) => setTimeout(r, 150));
  }
  child.kill('SIGKILL');
  throw new Error(`server did not become healthy within ${timeoutMs} ms:\n${output()}`);
}

/**
 * Spawns `node --import tsx server/index.ts` on a fresh database, free ports and a temporary DATA_DIR. `database`
 * gives it a database of the test's own instead (destroyed with the server).
 */
export async function startServer(overrides: Record<string, string> = {}, options: { database?: TestDatabase } = {}): Promise<StartedServer> {
  const db = options.database ?? (await createTestDatabase({ migrate: false }));
  const dataDir = mkdtempSync(path.join(tmpdir(), 'cellwright-data-'));
  const port = Number(overrides.PORT ?? (await getFreePort()));
  const smtpPort = Number(overrides.SMTP_PORT ?? (await getFreePort()));
  const inherited = Object.fromEntries(
    Object.entries(process.env).filter((e): e is [string, string] => typeof e[1] === 'string' && !e[0].startsWith('VITEST')),
  );
  const env: Record<string, string> = {
    ...inherited,
    NODE_ENV: 'production',
    HOST: '127.0.0.1',
    BCRYPT_COST: '10',
    LOG_LEVEL: 'warn',
    DB_HOST: db.config.host,
    DB_PORT: String(db.config.port),
    DB_USER: db.config.user,
    DB_PASSWORD: db.config.password,
    DB_NAME: db.name,
    DATA_DIR: dataDir,
    SMTP_HOST: '127.0.0.1',
    FAKE_SMTP: 'true',
    ...overrides,
    PORT: String(port),
    SMTP_PORT: String(smtpPort),
  };
  env.PUBLIC_URL ??= `http://127.0.0.1:${port}`;
  const url = `http://127.0.0.1:${port}`;

  let child!: ChildProcess;
  let log = '';
  const output = () => log;
  const spawnChild = async () => {
    child = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], {
      cwd: repoRoot,
      env,
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    const append = (chunk: Buffer) => {
      log = (log + chunk.toString('utf8')).slice(-200_000);
    };
    child.stdout!.on('data', append);
    child.stderr!.on('data', append);
    await waitForHealth(url, child, output, 90_000);
  };

  const peers: ChildProcess[] = [];
  const cleanup = async () => {
    for (const p of peers) {
      p.kill('SIGKILL');
      await waitForExit(p, 5_000);
    }
    await db.destroy();
    rmSync(dataDir, { recursive: true, force: true });
  };

  try {
    await spawnChild();
  } catch (err) {
    await cleanup();
    throw err;
  }

  return {
    url,
    port,
    env,
    db,
    output,
    async stop() {
      child.kill('SIGTERM');
      const status = await waitForExit(child, 20_000);
      await cleanup();
      return status;
    },
    async kill() {
      child.kill('SIGKILL');
      await waitForExit(child, 5_000);
    },
    async terminate() {
      child.kill('SIGTERM');
      return waitForExit(child, 20_000);
    },
    async restart() {
      await spawnChild();
    },
    async peer() {
      const peerPort = await getFreePort();
      const peerEnv = { ...env, PORT: String(peerPort), SMTP_PORT: String(await getFreePort()), PUBLIC_URL: env.PUBLIC_URL };
      const peerUrl = `http://127.0.0.1:${peerPort}`;
      const p = spawn(process.execPath, ['--import', 'tsx', 'server/index.ts'], { cwd: repoRoot, env: peerEnv, stdio: ['ignore', 'pipe', 'pipe'] });
      peers.push(p);
      let peerLog = '';
      const append = (chunk: Buffer) => {
        peerLog = (peerLog + chunk.toString('utf8')).slice(-200_000);
      };
      p.stdout!.on('data', append);
      p.stderr!.on('data', append);
      await waitForHealth(peerUrl, p, () => peerLog, 90_000);
      return {
        url: peerUrl,
        output: () => peerLog,
        async kill() {
          p.kill('SIGKILL');
          await waitForExit(p, 5_000);
        },
        async terminate() {
          p.kill('SIGTERM');
          return waitForExit(p, 20_000);
        },
      };
    },
  };
}

/**
 * Signs up on a spawned server as a person would: asks for the link, reads it from the mail the server's capture
 * stored (as the operator's `npm run mail` would) and finishes with name, password and team name.
 */
export async function signUpOn(
  server: Pick<StartedServer, 'url' | 'db'>,
  account: { email: string; password: string; name: string; teamName: string },
): Promise<{ token: string; user: { id: number; email: string; name: string }; team: { id: number; name: string; role: string } }> {
  const { linkToken, mailFor, waitForMail } = await import('./mailbox');
  const post = (p: string, body: unknown) =>
    fetch(`${server.url}${p}`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(body) });
  const afterId = (await mailFor(server.db.knex, account.email))[0]?.id ?? 0;
  const asked = await post('/api/auth/signup', { email: account.email });
  if (asked.status !== 202) throw new Error(`signup answered ${asked.status}: ${await asked.text()}`);
  const { token } = linkToken(await waitForMail(server.db.knex, account.email, { subject: /finish creating/i, afterId }), 'sign-up');
  const done = await post('/api/auth/signup/complete', { token, name: account.name, password: account.password, teamName: account.teamName });
  if (done.status !== 201) throw new Error(`signup completion answered ${done.status}: ${await done.text()}`);
  return (await done.json()) as Awaited<ReturnType<typeof signUpOn>>;
}
