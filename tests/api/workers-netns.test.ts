// Workers on addresses of their own: each compute worker runs in a Linux network namespace joined to the host by a
// veth pair, so it reaches the studio and Redis over an address other than loopback, as another machine would;
// then one is cut off mid-run. Needs root and iproute2 (`ip netns`); elsewhere the suite says why it skips.
import { execFileSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startPrivateRedis, type PrivateRedis } from '../helpers/private-redis';
import { startWorkerProcess, type WorkerProcess } from '../helpers/worker-process';
import { call, createRun, openStudio, terminal, waitForRun, type Studio } from '../helpers/studio-process';

function netnsAvailable(): string | null {
  if (process.getuid?.() !== 0) return 'not root';
  try {
    execFileSync('ip', ['netns', 'list'], { stdio: 'ignore' });
    return null;
  } catch {
    return 'no iproute2 with network namespaces';
  }
}
const unavailable = netnsAvailable();
if (unavailable) console.warn(`workers in network namespaces: skipped (${unavailable})`);

const ip = (...args: string[]) => execFileSync('ip', args, { stdio: 'pipe' });
const tag = String(process.pid % 100_000);
// A /30 per worker in a private range, numbered from the pid so parallel suites on one machine do not collide.
const subnet = 16 + (process.pid % 200);
const links = [1, 2].map((n) => ({ ns: `cw${tag}n${n}`, host: `cw${tag}h${n}`, peer: `cw${tag}p${n}`, hostAddr: `10.${subnet}.${n}.1`, workerAddr: `10.${subnet}.${n}.2` }));

let redis: PrivateRedis;
// Workers on other machines reach Redis over the network: it must require a password (README, Workers).
const password = randomBytes(18).toString('base64url');
let studio: Studio;
const workers: WorkerProcess[] = [];

describe.skipIf(unavailable !== null)('workers in network namespaces', () => {
  beforeAll(async () => {
    for (const l of links) {
      ip('netns', 'add', l.ns);
      ip('link', 'add', l.host, 'type', 'veth', 'peer', 'name', l.peer);
      ip('link', 'set', l.peer, 'netns', l.ns);
      ip('addr', 'add', `${l.hostAddr}/30`, 'dev', l.host);
      ip('link', 'set', l.host, 'up');
      ip('netns', 'exec', l.ns, 'ip', 'addr', 'add', `${l.workerAddr}/30`, 'dev', l.peer);
      ip('netns', 'exec', l.ns, 'ip', 'link', 'set', l.peer, 'up');
      ip('netns', 'exec', l.ns, 'ip', 'link', 'set', 'lo', 'up');
    }
    redis = await startPrivateRedis({ bind: ['127.0.0.1', ...links.map((l) => l.hostAddr)], password });
    // The studio listens on every address (the test talks to it on loopback, the workers on their veth address)
    // and computes nothing itself; MariaDB stays on loopback, out of the workers' reach.
    studio = await openStudio({ HOST: '0.0.0.0', REDIS_URL: redis.url, WORKER_IN_SERVER: 'false' });
    for (const l of links) {
      const url = `http://${l.hostAddr}:${studio.server.port}`;
      workers.push(await startWorkerProcess(studio.server, { CELLWRIGHT_URL: url, REDIS_URL: `redis://:${password}@${l.hostAddr}:${redis.port}` }, { netns: l.ns }));
    }
  });

  afterAll(async () => {
    for (const w of workers) await w.kill();
    await studio?.server.stop();
    await redis?.destroy();
    for (const l of links) {
      try {
        ip('link', 'del', l.host);
      } catch {
        // gone with its namespace already
      }
      try {
        ip('netns', 'del', l.ns);
      } catch {
        // never made
      }
    }
  });

  it('trains on workers that reach the studio only over their own addresses, and finishes a run when one is cut off mid-training', async () => {
    const page = await call(studio, 'GET', `/api/teams/${studio.teamId}/workers`);
    expect(page.body.workers).toHaveLength(2);

    const reference = await createRun(studio, 'Over veth', { from: 6, to: 7 });
    expect((await waitForRun(studio, reference, terminal)).state).toBe('succeeded');

    const runId = await createRun(studio, 'Cut off', { from: 6, to: 7 });
    let holder: string | undefined;
    for (let i = 0; i < 600 && !holder; i += 1) {
      const now = await call(studio, 'GET', `/api/teams/${studio.teamId}/workers`);
      holder = (now.body.workers as { workerId: string; task: { kind: string } | null }[]).find((w) => w.task?.kind === 'train')?.workerId;
      if (!holder) await new Promise((r) => setTimeout(r, 100));
    }
    expect(holder).toBeDefined();
    const index = workers.findIndex((w) => w.output().includes(holder!));
    // The cable is pulled: the worker keeps running but can reach neither the studio nor Redis.
    ip('link', 'set', links[index].host, 'down');
    const done = await waitForRun(studio, runId, terminal);
    expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
    expect(done.jobs[0].servedBy.map((w) => w.workerId)).not.toContain(holder);
    const checksums = async (id: number) =>
      ((await studio.server.db.knex('codebooks').where({ run_id: id }).orderBy('size').select('checksum')) as { checksum: string }[]).map((r) => r.checksum);
    expect(await checksums(runId)).toEqual(await checksums(reference));
  });
});
