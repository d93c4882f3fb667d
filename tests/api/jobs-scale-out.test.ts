// Jobs on BullMQ with MariaDB as the record: several server processes on one database, and a Redis that stops,
// restarts or forgets everything while runs are in flight. Real processes, real Redis, real MariaDB.
import { Redis } from 'ioredis';
import { afterAll, describe, expect, it } from 'vitest';
import { startPrivateMariaDb } from '../helpers/private-mariadb';
import { startPrivateRedis, type PrivateRedis } from '../helpers/private-redis';
import { codebookSizes, createRun, openStudio, terminal, training, waitForRun, type Studio } from '../helpers/studio-process';

/** Job ids a process's log says it took ("job taken", one line per attempt it started). */
function takenIn(output: string): number[] {
  return output
    .split('\n')
    .filter((line) => line.includes('"job taken"'))
    .map((line) => (JSON.parse(line) as { jobId: number }).jobId);
}

const open: { studio?: Studio; redis?: PrivateRedis }[] = [];
afterAll(async () => {
  for (const o of open) {
    await o.studio?.server.stop();
    await o.redis?.destroy();
  }
});

describe('two server processes on one database', () => {
  it('run every job exactly once between them, and both take a share', async () => {
    const studio = await openStudio({});
    open.push({ studio });
    const peer = await studio.server.peer();
    const runs: number[] = [];
    for (let i = 0; i < 6; i += 1) runs.push(await createRun(studio, `Shared ${i}`, { from: 3, to: 6 }, i % 2 === 0 ? studio.server.url : peer.url));
    const views = [];
    for (const id of runs) views.push(await waitForRun(studio, id, terminal));
    expect(views.map((v) => [v.state, v.error])).toEqual(runs.map(() => ['succeeded', null]));
    for (const id of runs) expect(await codebookSizes(studio, id)).toEqual([8, 16, 32, 64].map((size) => ({ size, n: 1 })));

    const jobIds = views.flatMap((v) => v.jobs.map((j) => j.id)).sort((a, b) => a - b);
    expect(views.flatMap((v) => v.jobs.map((j) => j.attempts))).toEqual(jobIds.map(() => 0));
    const mine = takenIn(studio.server.output());
    const theirs = takenIn(peer.output());
    // Each job was taken once, by one of the two processes: no job twice, none missed.
    expect([...mine, ...theirs].sort((a, b) => a - b)).toEqual(jobIds);
    expect(mine.length).toBeGreaterThan(0);
    expect(theirs.length).toBeGreaterThan(0);
    await peer.terminate();
  });
});

describe('a Redis that forgets', () => {
  it('loses no run when the studio\u2019s keys vanish from Redis mid-training', async () => {
    const studio = open[0].studio!;
    const runId = await createRun(studio, 'Forgotten by Redis', { from: 7, to: 9 });
    await waitForRun(studio, runId, training);
    const redis = new Redis(studio.server.env.REDIS_URL!);
    try {
      const keys = await redis.keys(`cw:${studio.server.db.name}:*`);
      expect(keys.length).toBeGreaterThan(0);
      await redis.del(...keys);
    } finally {
      redis.disconnect();
    }
    const run = await waitForRun(studio, runId, terminal);
    expect({ state: run.state, error: run.error }).toEqual({ state: 'succeeded', error: null });
    expect(run.jobs.map((j) => [j.kind, j.state])).toEqual([
      ['train', 'succeeded'],
      ['evaluate', 'succeeded'],
    ]);
    expect(await codebookSizes(studio, runId)).toEqual([128, 256, 512].map((size) => ({ size, n: 1 })));
  });

  it('finishes runs across a Redis stopped and restarted mid-run, and across one restarted empty', async () => {
    const redis = await startPrivateRedis();
    const studio = await openStudio({ REDIS_URL: redis.url });
    open.push({ studio, redis });

    const kept = await createRun(studio, 'Redis restarted', { from: 7, to: 9 });
    await waitForRun(studio, kept, training);
    await redis.stop();
    await new Promise((r) => setTimeout(r, 2_000));
    await redis.start();
    expect((await waitForRun(studio, kept, terminal)).state).toBe('succeeded');

    const wiped = await createRun(studio, 'Redis restarted empty', { from: 7, to: 9 });
    await waitForRun(studio, wiped, training);
    await redis.stop();
    await redis.start({ wipe: true });
    const run = await waitForRun(studio, wiped, terminal);
    expect({ state: run.state, error: run.error }).toEqual({ state: 'succeeded', error: null });
    for (const id of [kept, wiped]) expect(await codebookSizes(studio, id)).toEqual([128, 256, 512].map((size) => ({ size, n: 1 })));
  });
});

describe('a database that goes away', () => {
  it('keeps a finished job\u2019s results while MariaDB is down and commits them when it is back', async () => {
    const mariadb = await startPrivateMariaDb();
    const studio = await openStudio({}, mariadb.database);
    open.push({ studio });
    const runId = await createRun(studio, 'Outlives an outage', { from: 7, to: 9 });
    await waitForRun(studio, runId, training);
    await mariadb.stop();
    // Training goes on in memory; its final write meets the outage and waits (the log says so) instead of failing.
    const deadline = Date.now() + 180_000;
    while (!/retrying the write[^\n]*"what":"commit job|"what":"commit job[^\n]*retrying the write/.test(studio.server.output())) {
      if (Date.now() > deadline) throw new Error(`the job's final write never met the outage:\n${studio.server.output().slice(-3000)}`);
      await new Promise((r) => setTimeout(r, 200));
    }
    await mariadb.start();
    const run = await waitForRun(studio, runId, terminal);
    expect({ state: run.state, error: run.error }).toEqual({ state: 'succeeded', error: null });
    expect(run.jobs.map((j) => [j.kind, j.state, j.attempts])).toEqual([
      ['train', 'succeeded', 0],
      ['evaluate', 'succeeded', 0],
    ]);
    expect(await codebookSizes(studio, runId)).toEqual([128, 256, 512].map((size) => ({ size, n: 1 })));
  });
});
