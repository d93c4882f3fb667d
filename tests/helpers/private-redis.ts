import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { Redis } from 'ioredis';
import { getFreePort } from './ports';

/**
 * A Redis of a test's own (Debian's redis-server, as scripts/redis.sh runs it: loopback, append-only, no eviction),
 * for tests that stop, restart or wipe it under a running studio without touching the suite's shared one.
 */
export interface PrivateRedis {
  url: string;
  port: number;
  /** SIGTERM and wait: Redis writes its append-only file and exits, as an orderly stop would. */
  stop(): Promise<void>;
  /** Starts it again on the same port; with `wipe`, from an empty directory (everything it held is gone). */
  start(options?: { wipe?: boolean }): Promise<void>;
  /** Stops it and removes its directory. */
  destroy(): Promise<void>;
}

async function waitForPing(port: number, password?: string): Promise<void> {
  const deadline = Date.now() + 15_000;
  for (;;) {
    const client = new Redis({ port, host: '127.0.0.1', password, lazyConnect: true, maxRetriesPerRequest: 0, retryStrategy: () => null });
    client.on('error', () => undefined);
    try {
      await client.connect();
      if ((await client.ping()) === 'PONG') return;
    } catch {
      // not listening yet
    } finally {
      client.disconnect();
    }
    if (Date.now() > deadline) throw new Error(`redis-server on port ${port} did not answer`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

/**
 * `bind`: the addresses to listen on (loopback only unless a test gives workers addresses of their own); `password`:
 * required of every client, as a Redis that workers on other machines reach must (Redis refuses unauthenticated
 * clients from other addresses otherwise: its protected mode).
 */
export async function startPrivateRedis(options: { bind?: string[]; password?: string } = {}): Promise<PrivateRedis> {
  const port = await getFreePort();
  let dir = mkdtempSync(path.join(tmpdir(), 'cellwright-redis-'));
  let child: ChildProcess | undefined;
  const launch = async () => {
    const auth = options.password ? ['--requirepass', options.password] : [];
    child = spawn('redis-server', ['--port', String(port), '--bind', ...(options.bind ?? ['127.0.0.1']), ...auth, '--dir', dir, '--appendonly', 'yes', '--maxmemory-policy', 'noeviction', '--daemonize', 'no', '--save', ''], {
      stdio: 'ignore',
    });
    await waitForPing(port, options.password);
  };
  const stop = async () => {
    const c = child;
    child = undefined;
    if (!c || c.exitCode !== null) return;
    await new Promise<void>((resolve) => {
      c.once('exit', () => resolve());
      c.kill('SIGTERM');
    });
  };
  await launch();
  return {
    url: options.password ? `redis://:${encodeURIComponent(options.password)}@127.0.0.1:${port}` : `redis://127.0.0.1:${port}`,
    port,
    stop,
    async start(options = {}) {
      if (options.wipe) {
        rmSync(dir, { recursive: true, force: true });
        dir = mkdtempSync(path.join(tmpdir(), 'cellwright-redis-'));
      }
      await launch();
    },
    async destroy() {
      await stop();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
