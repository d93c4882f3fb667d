import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { StartedServer } from './server';

const repoRoot = fileURLToPath(new URL('../..', import.meta.url));

export interface WorkerProcess {
  output(): string;
  /** SIGKILL, as a machine that vanished would. */
  kill(): Promise<void>;
  /** SIGTERM, as an orderly stop would. */
  terminate(): Promise<void>;
  pid: number;
}

/**
 * Spawns `npm run worker`'s entry (`node --import tsx server/worker/main.ts`) against a started server, as a second
 * machine would run it: the studio's URL, its Redis, the token file the studio made; a cache folder of its own.
 */
export async function startWorkerProcess(server: StartedServer, env: Record<string, string> = {}, options: { netns?: string } = {}): Promise<WorkerProcess> {
  const cacheDir = mkdtempSync(path.join(tmpdir(), 'cellwright-worker-'));
  // In a network namespace of its own, the worker reaches the studio only over the addresses the test gave it
  // (`ip netns exec` runs the command in place, so the pid is the worker's).
  const [command, args] = options.netns
    ? ['ip', ['netns', 'exec', options.netns, process.execPath, '--import', 'tsx', 'server/worker/main.ts']]
    : [process.execPath, ['--import', 'tsx', 'server/worker/main.ts']];
  const child: ChildProcess = spawn(command, args, {
    cwd: repoRoot,
    env: {
      ...Object.fromEntries(Object.entries(process.env).filter((e): e is [string, string] => typeof e[1] === 'string' && !e[0].startsWith('VITEST'))),
      CELLWRIGHT_URL: server.url,
      REDIS_URL: server.env.REDIS_URL!,
      WORKER_TOKEN_FILE: path.join(server.env.DATA_DIR, 'secrets', 'worker-token'),
      WORKER_CACHE_DIR: cacheDir,
      ENGINE_THREADS: '1',
      LOG_LEVEL: 'info',
      ...env,
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let log = '';
  const append = (chunk: Buffer) => {
    log = (log + chunk.toString('utf8')).slice(-200_000);
  };
  child.stdout!.on('data', append);
  child.stderr!.on('data', append);
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  const deadline = Date.now() + 60_000;
  while (!log.includes(' joined ')) {
    if (child.exitCode !== null || Date.now() > deadline) {
      child.kill('SIGKILL');
      throw new Error(`the worker did not join:\n${log}`);
    }
    await new Promise((r) => setTimeout(r, 100));
  }
  const stop = async (signal: NodeJS.Signals) => {
    if (child.exitCode === null && child.signalCode === null) child.kill(signal);
    await exited;
    rmSync(cacheDir, { recursive: true, force: true });
  };
  return { output: () => log, kill: () => stop('SIGKILL'), terminate: () => stop('SIGTERM'), pid: child.pid! };
}
