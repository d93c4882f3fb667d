// Data-parallel entropy-constrained training: a λ run's passes spread shard by shard over real worker processes
// (npm run worker's entry), with a real server process, Redis and MariaDB. The studio computes nothing itself
// (WORKER_IN_SERVER=false). One worker trains in its own process; two split the shards between them. A greedy tree
// run's node splits go over the same wire.
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
const RUN = { patch: { width: 2, height: 2 }, init: 'split', epsilon: 0.0001, maxIterations: 30, seed: 3, bits: 5, lambdas: [40] };

beforeAll(async () => {
  scratch = mkdtempSync(path.join(tmpdir(), 'cw-ecvq-shards-'));
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
}, 120_000);

afterAll(async () => {
  for (const w of workers) await w.kill();
  await studio?.server.stop();
  rmSync(scratch, { recursive: true, force: true });
});

/** The run's entropy-constrained codebook: its codeword checksum and Huffman lengths, as exported. */
async function trained(name: string): Promise<{ runId: number; checksum: string; codeLengths: number[] }> {
  const res = await call(studio, 'POST', `/api/teams/${studio.teamId}/runs`, { name, trainingSetId: setId, heldOutSetId: setId, ...RUN });
  expect(res.status).toBe(201);
  const runId = res.body.run.id as number;
  const done = await waitForRun(studio, runId, terminal);
  expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
  const row = (await studio.server.db.knex('codebooks').where({ run_id: runId, structure: 'entropy-constrained' }).first('id', 'checksum')) as { id: number; checksum: string };
  const exported = await call(studio, 'GET', `/api/teams/${studio.teamId}/codebooks/${row.id}/export`);
  expect(exported.status).toBe(200);
  return { runId, checksum: row.checksum, codeLengths: exported.body.structure.codeLengths as number[] };
}

/** Every codebook checksum of a greedy tree run (b = 3 and 4), by size. */
async function treeRun(name: string): Promise<string[]> {
  const res = await call(studio, 'POST', `/api/teams/${studio.teamId}/runs`, {
    name, trainingSetId: setId, heldOutSetId: setId, ...RUN, lambdas: undefined, bits: { from: 3, to: 4 }, structure: 'tree', growth: 'greedy',
  });
  expect(res.status).toBe(201);
  const done = await waitForRun(studio, res.body.run.id, terminal);
  expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
  const rows = (await studio.server.db.knex('codebooks').where({ run_id: res.body.run.id }).orderBy('size').select('checksum', 'structure')) as { checksum: string; structure: string }[];
  expect(rows.map((r) => r.structure)).toEqual(['tree', 'tree']);
  return rows.map((r) => r.checksum);
}

/** Workers whose log shows they computed shards of some run so far. */
const hosting = () => workers.filter((w) => w.output().includes('"hosting shards"')).length;

describe('an entropy-constrained run spread over worker processes', () => {
  it('gives the same codewords and Huffman lengths with 1 and 2 workers, equal to the CLI\u2019s train --lambda on the same images, and the same greedy trees', { timeout: 600_000 }, async () => {
    workers.push(await startWorkerProcess(studio.server));
    const one = await trained('One worker');
    const treeOne = await treeRun('Greedy tree, one worker');
    expect(hosting()).toBe(0); // one worker trains in its own process
    workers.push(await startWorkerProcess(studio.server));
    const sessions = () => workers.map((w) => w.output().split('\n').filter((l) => l.includes('"hosting shards"')).length).reduce((a, b) => a + b, 0);
    const two = await trained('Two workers');
    // Both workers hosted shards: the Lloyd passes and the entropy-constrained passes went over the wire.
    expect(hosting()).toBe(2);
    expect(sessions()).toBeGreaterThanOrEqual(4);
    expect(two.checksum).toBe(one.checksum);
    expect(two.codeLengths).toEqual(one.codeLengths);
    // A greedy tree run: its Lloyd-free growth is one session per b, every node's 2-means over the wire.
    const before = sessions();
    expect(await treeRun('Greedy tree, two workers')).toEqual(treeOne);
    expect(sessions() - before).toBeGreaterThanOrEqual(4);
    expect(one.codeLengths.length).toBeLessThan(32);

    // The CLI trains on the run's training images in the studio's order (by upload), named so that its sorted folder
    // listing keeps that order; one process, the same shard layout.
    const rows = (await studio.server.db.knex('run_images as ri').join('images as i', 'i.id', 'ri.image_id').where({ 'ri.run_id': one.runId, 'ri.role': 'training' }).orderBy('i.id').select('i.file_name')) as { file_name: string }[];
    const dir = path.join(scratch, 'train');
    mkdirSync(dir);
    rows.forEach((r, i) => writeFileSync(path.join(dir, `${String(i).padStart(3, '0')}.png`), tiles.get(r.file_name)!));
    const ctx: CliContext = { stdout: { write: () => undefined }, stderr: { write: () => undefined }, stderrIsTTY: false };
    const out = path.join(scratch, 'cli.json');
    const status = await cli(['train', '--images', dir, '--patch', '2x2', '--bits', '5', '--init', 'split', '--epsilon', '0.0001', '--max-iterations', '30', '--seed', '3', '--threads', '1', '--lambda', '40', '--out', out, '--json'], ctx);
    expect(status).toBe(0);
    const text = readFileSync(out, 'utf8');
    expect(text).toContain(one.checksum);
    expect(text.replace(/\s/g, '')).toContain(`"codeLengths":${JSON.stringify(one.codeLengths)}`);
  });
});
