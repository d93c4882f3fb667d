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

async function trained(name: string): Promise<{ runId: number; checksums: string[] }> {
  const res = await call(studio, 'POST', `/api/teams/${studio.teamId}/runs`, { name, trainingSetId: setId, heldOutSetId: setId, bits: { from: BITS, to: BITS }, ...RUN });
  expect(res.status).toBe(201);
  const runId = res.body.run.id as number;
  const done = await waitForRun(studio, runId, terminal);
  expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
  const rows = (await studio.server.db.knex('codebooks').where({ run_id: runId }).orderBy('size').select('checksum')) as { checksum: string }[];
  return { runId, checksums: rows.map((r) => r.checksum) };
}

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
});
