// k-means++ seeding spread over the shards of data-parallel training: each shard keeps its own D² on the worker
// that hosts it, the coordinator draws by the shard totals in shard order. Real worker processes (npm run worker's
// entry), a real server process, Redis and MariaDB; the studio computes nothing itself (WORKER_IN_SERVER=false).
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
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
const RUN = { patch: { width: 2, height: 2 }, init: 'kmeans++', epsilon: 0.0001, maxIterations: 20, seed: 9 };
const BITS = 6;

beforeAll(async () => {
  scratch = mkdtempSync(path.join(tmpdir(), 'cw-seeding-'));
  studio = await openStudio({ WORKER_IN_SERVER: 'false' });
  setId = (await call(studio, 'POST', `/api/teams/${studio.teamId}/image-sets`, { name: 'Seeded survey' })).body.imageSet.id;
  const form = new FormData();
  for (const [i, tile] of seabedSet(41, 8, 320, 240).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    const name = `seeded-${i}.png`;
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

async function startRun(name: string, bits = BITS, settings: object = {}): Promise<number> {
  const res = await call(studio, 'POST', `/api/teams/${studio.teamId}/runs`, { name, trainingSetId: setId, heldOutSetId: setId, bits: { from: bits, to: bits }, ...RUN, ...settings });
  expect(res.status).toBe(201);
  return res.body.run.id as number;
}

async function finished(runId: number): Promise<{ runId: number; checksums: string[] }> {
  const done = await waitForRun(studio, runId, terminal);
  expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
  const rows = (await studio.server.db.knex('codebooks').where({ run_id: runId }).orderBy('size').select('checksum')) as { checksum: string }[];
  return { runId, checksums: rows.map((r) => r.checksum) };
}

const trained = async (name: string, bits = BITS, settings: object = {}) => finished(await startRun(name, bits, settings));

/** Shard hosts that served a seeding step so far (the host logs each session it opens; seeding opens it). */
const hosting = () => workers.filter((w) => w.output().includes('"hosting shards"')).length;

describe('k-means++ seeding spread over worker processes', () => {
  it('gives the same codebook with 1 and 2 workers, equal to the CLI\u2019s train on the same images', { timeout: 600_000 }, async () => {
    workers.push(await startWorkerProcess(studio.server));
    const one = await trained('Seeded, one worker');
    expect(hosting()).toBe(0); // one worker seeds and trains in its own process, through in-process shards
    workers.push(await startWorkerProcess(studio.server));
    const two = await trained('Seeded, two workers');
    expect(hosting()).toBe(2);
    // Both hosts kept D² for their shards: the seeding ran there, not on the coordinator over the whole sample.
    expect(workers.filter((w) => w.output().includes('"seeding shards"'))).toHaveLength(2);
    expect(one.checksums).toHaveLength(1);
    expect(two.checksums).toEqual(one.checksums);

    // The CLI trains on the run's training images in the studio's order (by upload), named so that its sorted
    // folder listing keeps that order.
    const rows = (await studio.server.db.knex('run_images as ri').join('images as i', 'i.id', 'ri.image_id').where({ 'ri.run_id': one.runId, 'ri.role': 'training' }).orderBy('i.id').select('i.file_name')) as { file_name: string }[];
    const dir = path.join(scratch, 'train');
    mkdirSync(dir);
    rows.forEach((r, i) => writeFileSync(path.join(dir, `${String(i).padStart(3, '0')}.png`), tiles.get(r.file_name)!));
    const ctx: CliContext = { stdout: { write: () => undefined }, stderr: { write: () => undefined }, stderrIsTTY: false };
    const out = path.join(scratch, 'cli.json');
    const status = await cli(['train', '--images', dir, '--patch', '2x2', '--bits', String(BITS), '--init', 'kmeans++', '--epsilon', '0.0001', '--max-iterations', '20', '--seed', '9', '--threads', '1', '--out', out, '--json'], ctx);
    expect(status).toBe(0);
    expect(readFileSync(out, 'utf8')).toContain(one.checksums[0]);
  });

  it('finishes with the same codebook when a worker holding shards is killed mid-seeding', { timeout: 600_000 }, async () => {
    // 2048 codewords: the seeding takes thousands of steps, long enough to lose a host in the middle of it.
    const slow = { maxIterations: 1 };
    workers.push(await startWorkerProcess(studio.server));
    const reference = await trained('Seeded, reference', 11, slow);
    const seedings = (w: WorkerProcess) => w.output().split('\n').filter((l) => l.includes('"seeding shards"')).length;
    const before = new Map(workers.map((w) => [w, seedings(w)]));
    const runId = await startRun('Seeding host lost', 11, slow);
    // As soon as this run's seeding reaches the hosts, kill one that is not the coordinator (the worker holding the
    // training task).
    let victim: WorkerProcess | undefined;
    for (let i = 0; i < 1200 && !victim; i += 1) {
      const page = (await call(studio, 'GET', `/api/teams/${studio.teamId}/workers`)).body as { workers: { workerId: string; task: { kind: string } | null }[] };
      const coordinator = page.workers.find((w) => w.task?.kind === 'train')?.workerId;
      if (coordinator) victim = workers.find((w) => !w.output().includes(coordinator) && seedings(w) > before.get(w)!);
      if (!victim) await new Promise((r) => setTimeout(r, 50));
    }
    expect(victim).toBeDefined();
    await victim!.kill();
    const done = await finished(runId);
    expect(done.checksums).toEqual(reference.checksums);
    // The lost host's shards moved while seeding: their new host applied the earlier codewords first.
    const survivors = workers.filter((w) => w !== victim).map((w) => w.output()).join('\n');
    expect(survivors).toMatch(/"op":"seed".*shard hosts stopped; their shards go to live workers/);
  });
});
