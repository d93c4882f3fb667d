// Data-parallel training: one run's Lloyd passes spread shard by shard over real worker processes (npm run worker's
// entry), with a real server process, Redis and MariaDB. The studio computes nothing itself (WORKER_IN_SERVER=false).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../server/cli/context';
import { main as cli } from '../../server/cli/main';
import { startWorkerProcess, type WorkerProcess } from '../helpers/worker-process';
import {
  checksums, closeWorkerStudio, finished, hostToLose, logCount, openWorkerStudio, startRun as startIn, writeTrainingImages, type WorkerStudio,
} from '../helpers/worker-runs';
import { terminal, waitForRun } from '../helpers/studio-process';

let w: WorkerStudio;

/** 2×2 luma patches of eight 320×240 tiles, six of them for training: 115,200 vectors, seven shards. */
const RUN = { patch: { width: 2, height: 2 }, init: 'split', epsilon: 0.0001, maxIterations: 40, seed: 3 };

beforeAll(async () => {
  w = await openWorkerStudio({ setName: 'Wide survey', seed: 77, stem: 'wide' });
});

afterAll(() => closeWorkerStudio(w));

const startRun = (name: string, bits: number) => startIn(w, name, bits, RUN);
const trained = async (name: string, bits: number) => finished(w, await startRun(name, bits));

/** Workers whose log shows they computed shards of some run so far. */
const hosting = () => w.workers.filter((x) => x.output().includes('"hosting shards"')).length;

describe('a training run spread over worker processes', () => {
  it('gives the same codebooks with 1, 2 and 3 workers, equal to the CLI\u2019s train on the same images', { timeout: 600_000 }, async () => {
    w.workers.push(await startWorkerProcess(w.studio.server));
    const one = await trained('One worker', 5);
    expect(hosting()).toBe(0); // one worker trains in its own process
    w.workers.push(await startWorkerProcess(w.studio.server));
    const two = await trained('Two workers', 5);
    expect(hosting()).toBe(2);
    w.workers.push(await startWorkerProcess(w.studio.server));
    const three = await trained('Three workers', 5);
    expect(hosting()).toBe(3);
    expect(one.checksums).toHaveLength(1);
    expect(two.checksums).toEqual(one.checksums);
    expect(three.checksums).toEqual(one.checksums);

    // The CLI trains on the run's training images in the studio's order.
    const dir = await writeTrainingImages(w, one.runId);
    let stdout = '';
    const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: () => undefined }, stderrIsTTY: false };
    const out = path.join(w.scratch, 'cli.json');
    const status = await cli(['train', '--images', dir, '--patch', '2x2', '--bits', '5', '--init', 'split', '--epsilon', '0.0001', '--max-iterations', '40', '--seed', '3', '--threads', '1', '--out', out, '--json'], ctx);
    expect(status).toBe(0);
    const book = JSON.parse(readFileSync(out, 'utf8')) as { checksum?: string; codebooks?: { checksum: string }[] };
    expect(JSON.stringify(book)).toContain(one.checksums[0]);
  });

  it('finishes with the same codebook when a worker holding shards is killed mid-iteration', { timeout: 600_000 }, async () => {
    const reference = await trained('Reference, three workers', 7);
    const before = new Map<WorkerProcess, number>(w.workers.map((x) => [x, logCount(x, '"hosting shards"')]));
    const runId = await startRun('Shard host lost', 7);
    // Wait until this run's shards are being computed, then kill a worker that hosts some of them but does not
    // hold the training task (the coordinator).
    const victim = await hostToLose(w, '"hosting shards"', before, 600, 100);
    expect(victim).toBeDefined();
    await victim!.kill();
    const done = await waitForRun(w.studio, runId, terminal);
    expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
    expect(await checksums(w, runId)).toEqual(reference.checksums);
    const survivors = w.workers.filter((x) => x !== victim).map((x) => x.output()).join('\n');
    expect(survivors).toContain('shard hosts stopped; their shards go to live workers');
  });
});
