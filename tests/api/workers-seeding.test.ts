// k-means++ seeding spread over the shards of data-parallel training: each shard keeps its own D² on the worker
// that hosts it, the coordinator draws by the shard totals in shard order. Real worker processes (npm run worker's
// entry), a real server process, Redis and MariaDB; the studio computes nothing itself (WORKER_IN_SERVER=false).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../server/cli/context';
import { main as cli } from '../../server/cli/main';
import { startWorkerProcess, type WorkerProcess } from '../helpers/worker-process';
import {
  closeWorkerStudio, finished, hostToLose, logCount, openWorkerStudio, startRun as startIn, writeTrainingImages, type WorkerStudio,
} from '../helpers/worker-runs';

let w: WorkerStudio;

/** 2×2 luma patches of eight 320×240 tiles, six of them for training: 115,200 vectors, seven shards. */
const RUN = { patch: { width: 2, height: 2 }, init: 'kmeans++', epsilon: 0.0001, maxIterations: 20, seed: 9 };
const BITS = 6;

beforeAll(async () => {
  w = await openWorkerStudio({ setName: 'Seeded survey', seed: 41, stem: 'seeded' });
});

afterAll(() => closeWorkerStudio(w));

const startRun = (name: string, bits = BITS, settings: object = {}) => startIn(w, name, bits, { ...RUN, ...settings });
const trained = async (name: string, bits = BITS, settings: object = {}) => finished(w, await startRun(name, bits, settings));

/** Shard hosts that served a seeding step so far (the host logs each session it opens; seeding opens it). */
const hosting = () => w.workers.filter((x) => x.output().includes('"hosting shards"')).length;

describe('k-means++ seeding spread over worker processes', () => {
  it('gives the same codebook with 1 and 2 workers, equal to the CLI\u2019s train on the same images', { timeout: 600_000 }, async () => {
    w.workers.push(await startWorkerProcess(w.studio.server));
    const one = await trained('Seeded, one worker');
    expect(hosting()).toBe(0); // one worker seeds and trains in its own process, through in-process shards
    w.workers.push(await startWorkerProcess(w.studio.server));
    const two = await trained('Seeded, two workers');
    expect(hosting()).toBe(2);
    // Both hosts kept D² for their shards: the seeding ran there, not on the coordinator over the whole sample.
    expect(w.workers.filter((x) => x.output().includes('"seeding shards"'))).toHaveLength(2);
    expect(one.checksums).toHaveLength(1);
    expect(two.checksums).toEqual(one.checksums);

    // The CLI trains on the run's training images in the studio's order.
    const dir = await writeTrainingImages(w, one.runId);
    const ctx: CliContext = { stdout: { write: () => undefined }, stderr: { write: () => undefined }, stderrIsTTY: false };
    const out = path.join(w.scratch, 'cli.json');
    const status = await cli(['train', '--images', dir, '--patch', '2x2', '--bits', String(BITS), '--init', 'kmeans++', '--epsilon', '0.0001', '--max-iterations', '20', '--seed', '9', '--threads', '1', '--out', out, '--json'], ctx);
    expect(status).toBe(0);
    expect(readFileSync(out, 'utf8')).toContain(one.checksums[0]);
  });

  it('finishes with the same codebook when a worker holding shards is killed mid-seeding', { timeout: 600_000 }, async () => {
    // 2048 codewords: the seeding takes thousands of steps, long enough to lose a host in the middle of it.
    const slow = { maxIterations: 1 };
    w.workers.push(await startWorkerProcess(w.studio.server));
    const reference = await trained('Seeded, reference', 11, slow);
    const before = new Map<WorkerProcess, number>(w.workers.map((x) => [x, logCount(x, '"seeding shards"')]));
    const runId = await startRun('Seeding host lost', 11, slow);
    // As soon as this run's seeding reaches the hosts, kill one that is not the coordinator (the worker holding the
    // training task).
    const victim = await hostToLose(w, '"seeding shards"', before, 1200, 50);
    expect(victim).toBeDefined();
    await victim!.kill();
    const done = await finished(w, runId);
    expect(done.checksums).toEqual(reference.checksums);
    // The lost host's shards moved while seeding: their new host applied the earlier codewords first.
    const survivors = w.workers.filter((x) => x !== victim).map((x) => x.output()).join('\n');
    expect(survivors).toMatch(/"op":"seed".*shard hosts stopped; their shards go to live workers/);
  });
});
