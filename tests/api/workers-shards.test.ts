// Data-parallel training: one run's Lloyd passes spread shard by shard over real worker processes (npm run worker's
// entry), with a real server process, Redis and MariaDB. The studio computes nothing itself (WORKER_IN_SERVER=false).
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../server/cli/context';
import { main as cli } from '../../server/cli/main';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { startWorkerProcess, type WorkerProcess } from '../helpers/worker-process';
import { call, openStudio, terminal, waitForRun, type Studio } from '../helpers/studio-process';

let studio: Studio;
let setId: number;
const tiles = new Map<string, Buffer>();
const workers: WorkerProcess[] = [];
let scratch: string;

/** 2×2 luma patches of eight 320×240 tiles, six of them for training: 115,200 vectors, seven shards. */
const RUN = { patch: { width: 2, height: 2 }, init: 'split', epsilon: 0.0001, maxIterations: 40, seed: 3 };

beforeAll(async () => {
  scratch = mkdtempSync(path.join(tmpdir(), 'cw-shards-'));
  studio = await openStudio({ WORKER_IN_SERVER: 'false' });
  setId = (await call(studio, 'POST', `/api/teams/${studio.teamId}/image-sets`, { name: 'Wide survey' })).body.imageSet.id;
  const form = new FormData();
  for (const [i, tile] of seabedSet(77, 8, 320, 240).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    const name = `wide-${i}.png`;
    tiles.set(name, png);
    form.append('files', new Blob([new Uint8Array(png)], { type: 'image/png' }), name);
  }
  const upload = await fetch(`${studio.server.url}/api/teams/${studio.teamId}/image-sets/${setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${studio.token}` }, body: form });
  expect(upload.status).toBe(201);
  expect((await call(studio, 'POST', `/api/teams/${studio.teamId}/image-sets/${setId}/split`, { heldOutFraction: 0.25, seed: 5 })).status).toBe(200);
});

afterAll(async () => {
  for (const w of workers) await w.kill();
  await studio?.server.stop();
  rmSync(scratch, { recursive: true, force: true });
});

async function startRun(name: string, bits: number): Promise<number> {
  const res = await call(studio, 'POST', `/api/teams/${studio.teamId}/runs`, { name, trainingSetId: setId, heldOutSetId: setId, bits: { from: bits, to: bits }, ...RUN });
  expect(res.status).toBe(201);
  return res.body.run.id;
}

async function trained(name: string, bits: number): Promise<{ runId: number; checksums: string[] }> {
  const runId = await startRun(name, bits);
  const done = await waitForRun(studio, runId, terminal);
  expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
  return { runId, checksums: await checksums(runId) };
}

async function checksums(runId: number): Promise<string[]> {
  const rows = (await studio.server.db.knex('codebooks').where({ run_id: runId }).orderBy('size').select('checksum')) as { checksum: string }[];
  return rows.map((r) => r.checksum);
}

/** Workers whose log shows they computed shards of some run so far. */
const hosting = () => workers.filter((w) => w.output().includes('"hosting shards"')).length;

describe('a training run spread over worker processes', () => {
  it('gives the same codebooks with 1, 2 and 3 workers, equal to the CLI\u2019s train on the same images', { timeout: 600_000 }, async () => {
    workers.push(await startWorkerProcess(studio.server));
    const one = await trained('One worker', 5);
    expect(hosting()).toBe(0); // one worker trains in its own process
    workers.push(await startWorkerProcess(studio.server));
    const two = await trained('Two workers', 5);
    expect(hosting()).toBe(2);
    workers.push(await startWorkerProcess(studio.server));
    const three = await trained('Three workers', 5);
    expect(hosting()).toBe(3);
    expect(one.checksums).toHaveLength(1);
    expect(two.checksums).toEqual(one.checksums);
    expect(three.checksums).toEqual(one.checksums);

    // The CLI trains on the run's training images in the studio's order (by upload), named so that its
    // sorted folder listing keeps that order.
    const rows = (await studio.server.db.knex('run_images as ri').join('images as i', 'i.id', 'ri.image_id').where({ 'ri.run_id': one.runId, 'ri.role': 'training' }).orderBy('i.id').select('i.file_name')) as { file_name: string }[];
    const dir = path.join(scratch, 'train');
    (await import('node:fs')).mkdirSync(dir);
    rows.forEach((r, i) => writeFileSync(path.join(dir, `${String(i).padStart(3, '0')}.png`), tiles.get(r.file_name)!));
    let stdout = '';
    const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: () => undefined }, stderrIsTTY: false };
    const out = path.join(scratch, 'cli.json');
    const status = await cli(['train', '--images', dir, '--patch', '2x2', '--bits', '5', '--init', 'split', '--epsilon', '0.0001', '--max-iterations', '40', '--seed', '3', '--threads', '1', '--out', out, '--json'], ctx);
    expect(status).toBe(0);
    const book = JSON.parse((await import('node:fs')).readFileSync(out, 'utf8')) as { checksum?: string; codebooks?: { checksum: string }[] };
    expect(JSON.stringify(book)).toContain(one.checksums[0]);
  });

  it('finishes with the same codebook when a worker holding shards is killed mid-iteration', { timeout: 600_000 }, async () => {
    const reference = await trained('Reference, three workers', 7);
    const sessions = (w: WorkerProcess) => w.output().split('\n').filter((l) => l.includes('"hosting shards"')).length;
    const before = new Map(workers.map((w) => [w, sessions(w)]));
    const runId = await startRun('Shard host lost', 7);
    // Wait until this run's shards are being computed, then kill a worker that hosts some of them but does not
    // hold the training task (the coordinator).
    let victim: WorkerProcess | undefined;
    for (let i = 0; i < 600 && !victim; i += 1) {
      const page = (await call(studio, 'GET', `/api/teams/${studio.teamId}/workers`)).body as { workers: { workerId: string; task: { kind: string } | null }[] };
      const coordinator = page.workers.find((w) => w.task?.kind === 'train')?.workerId;
      if (coordinator) victim = workers.find((w) => !w.output().includes(coordinator) && sessions(w) > before.get(w)!);
      if (!victim) await new Promise((r) => setTimeout(r, 100));
    }
    expect(victim).toBeDefined();
    await victim!.kill();
    const done = await waitForRun(studio, runId, terminal);
    expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
    expect(await checksums(runId)).toEqual(reference.checksums);
    const survivors = workers.filter((w) => w !== victim).map((w) => w.output()).join('\n');
    expect(survivors).toContain('shard hosts stopped; their shards go to live workers');
  });
});
