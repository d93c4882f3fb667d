// Data-parallel Lloyd over worker processes (npm run bench runs it; alone: node --import tsx scripts/bench-shards.ts).
// A private Redis, shard hosts as separate processes with one engine thread each, and this process as the
// coordinator: per-iteration time and k-means++ seeding time with 1 and 2 hosts, the coordination overhead against
// the same shards computed in-process, and how long a cancellation takes to reach every host.
// `--seeding-only N` measures only the seeding, on N vectors (a quick look; the full run uses 1,000,000).
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Redis } from 'ioredis';
import { createLogger } from '../server/config/logger';
import { shutdownEngineWorkers, threadBudget, train, type IterationStat, type ShardExecutor } from '../server/engine';
import { computeKeys } from '../server/jobs/compute/keys';
import { createShardSpread } from '../server/jobs/compute/shard-coordinator';
import type { TrainingSample } from '../server/jobs/compute/shard-wire';
import { benchVectors } from './bench-shard-vectors';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const ITERATIONS = 5;
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

async function freePort(): Promise<number> {
  return new Promise((resolve) => {
    const s = createServer().listen(0, '127.0.0.1', () => {
      const { port } = s.address() as { port: number };
      s.close(() => resolve(port));
    });
  });
}

interface Host { child: ChildProcess; log: () => string; id: string }

async function startHost(redisUrl: string, prefix: string, id: string): Promise<Host> {
  const child = spawn(process.execPath, ['--import', 'tsx', path.join(root, 'scripts', 'bench-shard-host.ts'), redisUrl, prefix, id], { cwd: root, stdio: ['ignore', 'pipe', 'pipe'] });
  let log = '';
  child.stdout!.on('data', (c: Buffer) => (log += c.toString()));
  child.stderr!.on('data', (c: Buffer) => (log += c.toString()));
  for (let i = 0; i < 600 && !log.includes('ready'); i++) await new Promise((r) => setTimeout(r, 100));
  if (!log.includes('ready')) throw new Error(`shard host ${id} did not start:\n${log}`);
  return { child, log: () => log, id };
}

async function main(): Promise<void> {
  if (spawnSync('redis-server', ['--version'], { stdio: 'ignore' }).status !== 0) {
    console.log('data-parallel Lloyd: skipped (redis-server not installed; npm test installs it)');
    return;
  }
  const port = await freePort();
  const dir = mkdtempSync(path.join(tmpdir(), 'cw-bench-redis-'));
  const redisProcess = spawn('setsid', ['redis-server', '--port', String(port), '--bind', '127.0.0.1', '--dir', dir, '--appendonly', 'no', '--save', '', '--maxmemory-policy', 'noeviction', '--daemonize', 'no'], { stdio: 'ignore' });
  const redisUrl = `redis://127.0.0.1:${port}`;
  const redis = new Redis(redisUrl, { maxRetriesPerRequest: null, retryStrategy: (t) => (t > 50 ? null : 100) });
  await redis.ping();
  const prefix = 'cw:bench';
  const keys = computeKeys(prefix);
  const logger = createLogger('warn');
  const spread = createShardSpread({ redisUrl, prefix, logger });
  const hosts: Host[] = [];
  threadBudget.configure(1);
  try {
    const sampleOf = (n: number, d: number, seed: number): TrainingSample => ({ images: [], color: 'luma', patch: { width: d, height: 1 }, maxVectors: n, seed, meanBits: 0, dimension: d });
    /** Per-iteration times (ms, iterations 1..ITERATIONS, median) on the hosts now alive, or in this process. */
    const perIteration = async (n: number, d: number, k: number, where: 'hosts' | 'here'): Promise<{ ms: number; checksum: string }> => {
      const seed = 11;
      const vectors = benchVectors(n, d, seed);
      const trace: IterationStat[] = [];
      const result = await train(vectors, d, {
        k, init: 'random', seed: 5, epsilon: 0, maxIterations: ITERATIONS, threads: 1, onIteration: (s) => trace.push(s),
        openShards: where === 'hosts' ? ({ maxK, signal }) => spread.open({ jobId: 0, teamId: 0, sample: sampleOf(n, d, seed), vectors, maxK, signal }) : undefined,
      });
      const bytes = Buffer.from(result.codebooks[0].codewords.buffer);
      return { ms: median(trace.filter((t) => t.iteration > 0).map((t) => t.elapsedMs)), checksum: (await import('node:crypto')).createHash('sha256').update(bytes).digest('hex').slice(0, 12) };
    };

    /**
     * k-means++ seeding on the hosts alive (K = 256): ms from codeword 1 to the last (codeword 0 opens the session and
     * draws the hosts' samples, so it is left out), and a checksum of the codewords.
     */
    const seedingTime = async (n: number, d: number, k: number): Promise<{ ms: number; checksum: string }> => {
      const seed = 11;
      const vectors = benchVectors(n, d, seed);
      let from = 0;
      let to = 0;
      const timed = (shards: ShardExecutor): ShardExecutor => ({
        ...shards,
        seed: async (kk, c, choice, signal) => {
          const step = await shards.seed(kk, c, choice, signal);
          if (c === 0) from = performance.now();
          to = performance.now();
          return step;
        },
      });
      const result = await train(vectors, d, {
        k, init: 'kmeans++', seed: 5, epsilon: 0, maxIterations: 0, threads: 1,
        openShards: async ({ maxK, signal }) => timed(await spread.open({ jobId: 0, teamId: 0, sample: sampleOf(n, d, seed), vectors, maxK, signal })),
      });
      const bytes = Buffer.from(result.codebooks[0].codewords.buffer);
      return { ms: to - from, checksum: (await import('node:crypto')).createHash('sha256').update(bytes).digest('hex').slice(0, 12) };
    };
    const seedingOnly = process.argv.indexOf('--seeding-only');
    const seedingN = seedingOnly >= 0 ? Number(process.argv[seedingOnly + 1]) : 1_000_000;
    const reportSeeding = (one: { ms: number; checksum: string }, two: { ms: number; checksum: string }) =>
      console.log(`  k-means++ seeding, N=${seedingN.toLocaleString('en')}, d=16, K=256: 1 host ${one.ms.toFixed(0)} ms, 2 hosts ${two.ms.toFixed(0)} ms → ${(one.ms / two.ms).toFixed(2)}×; one message per host per codeword; codewords ${one.checksum} and ${two.checksum}${one.checksum === two.checksum ? ' (identical)' : ' (DIFFER)'}`);

    console.log(`\ndata-parallel Lloyd (shard hosts are worker processes with 1 engine thread; median of ${ITERATIONS} iterations; random init)`);
    hosts.push(await startHost(redisUrl, prefix, 'bench-host-1'));
    const seedOne = await seedingTime(seedingN, 16, 256);
    if (seedingOnly >= 0) {
      hosts.push(await startHost(redisUrl, prefix, 'bench-host-2'));
      reportSeeding(seedOne, await seedingTime(seedingN, 16, 256));
      return;
    }
    const one = await perIteration(1_000_000, 16, 1024, 'hosts');
    hosts.push(await startHost(redisUrl, prefix, 'bench-host-2'));
    const two = await perIteration(1_000_000, 16, 1024, 'hosts');
    reportSeeding(seedOne, await seedingTime(seedingN, 16, 256));
    console.log(`  N=1,000,000, d=16, K=1024: 1 host ${one.ms.toFixed(0)} ms/iteration, 2 hosts ${two.ms.toFixed(0)} ms/iteration → ${(one.ms / two.ms).toFixed(2)}× (target ≥ 1.7×); codewords ${one.checksum} and ${two.checksum}${one.checksum === two.checksum ? ' (identical)' : ' (DIFFER)'}`);

    // Coordination overhead: the same 8 shards with 1 host against in-process, K = 4096, d = 64 (2 MiB of sums per shard).
    hosts.pop()!.child.kill('SIGKILL');
    for (let i = 0; i < 100 && (await redis.exists(keys.worker('bench-host-2'))) === 1; i++) await new Promise((r) => setTimeout(r, 100));
    const n = 131_072;
    const here = await perIteration(n, 64, 4096, 'here');
    const remote = await perIteration(n, 64, 4096, 'hosts');
    console.log(`  N=${n.toLocaleString('en')}, d=64, K=4096 (8 shards): in-process ${here.ms.toFixed(0)} ms/iteration, over 1 host ${remote.ms.toFixed(0)} ms/iteration → coordination overhead ${(remote.ms - here.ms).toFixed(0)} ms/iteration (${((remote.ms - here.ms) / 8).toFixed(1)} ms per shard)`);

    // Cancel: abort mid-training with 2 hosts; time until each host has dropped the session.
    hosts.push(await startHost(redisUrl, prefix, 'bench-host-3'));
    const vectors = benchVectors(1_000_000, 16, 11);
    const controller = new AbortController();
    let abortedAt = 0;
    const training = train(vectors, 16, {
      k: 1024, init: 'random', seed: 5, epsilon: 0, maxIterations: 50, threads: 1, signal: controller.signal,
      openShards: ({ maxK, signal }) => spread.open({ jobId: 0, teamId: 0, sample: sampleOf(1_000_000, 16, 11), vectors, maxK, signal }),
      onIteration: (s) => {
        if (s.iteration === 2 && !abortedAt) {
          abortedAt = Date.now();
          controller.abort(new Error('bench cancel'));
        }
      },
    }).catch(() => undefined);
    await training;
    const dropped = async (h: Host) => {
      for (let i = 0; i < 100; i++) {
        const line = h.log().split('\n').find((l) => l.includes('training session cancelled by the studio'));
        if (line) return (JSON.parse(line) as { time: number }).time - abortedAt;
        await new Promise((r) => setTimeout(r, 50));
      }
      return Number.NaN;
    };
    const latencies = await Promise.all(hosts.map(dropped));
    console.log(`  cancel: every host dropped the session ${latencies.map((l) => `${l} ms`).join(', ')} after the abort (target ≤ 1000 ms)`);
  } finally {
    for (const h of hosts) h.child.kill('SIGKILL');
    spread.close();
    redis.disconnect();
    redisProcess.kill('SIGKILL');
    rmSync(dir, { recursive: true, force: true });
    await shutdownEngineWorkers();
  }
}

main().catch((err) => {
  process.stderr.write(`bench-shards: ${err instanceof Error ? err.stack : String(err)}\n`);
  process.exitCode = 1;
});
