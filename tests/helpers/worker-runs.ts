// Set-up shared by the tests that spread one run over real worker processes: a studio process that computes nothing
// itself, a split image set of invented seabed tiles, runs started and awaited, the hosts' logs read, and the run's
// training images written out for the command line to train on the same pictures.
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { expect } from 'vitest';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { call, openStudio, terminal, waitForRun, type Studio } from './studio-process';
import type { WorkerProcess } from './worker-process';

export interface WorkerStudio {
  studio: Studio;
  setId: number;
  /** The uploaded PNGs by file name. */
  tiles: Map<string, Buffer>;
  /** Worker processes the test started; all killed by closeWorkerStudio. */
  workers: WorkerProcess[];
  /** A scratch folder of the test's own, removed by closeWorkerStudio. */
  scratch: string;
}

/**
 * A studio process with WORKER_IN_SERVER=false and one image set of eight 320×240 seabed tiles (seabedSet(seed)),
 * named `${stem}-${i}.png` in upload order, a quarter held out (split seed 5).
 */
export async function openWorkerStudio(options: { setName: string; seed: number; stem: string }): Promise<WorkerStudio> {
  const scratch = mkdtempSync(path.join(tmpdir(), `cw-${options.stem}-`));
  const studio = await openStudio({ WORKER_IN_SERVER: 'false' });
  const setId = (await call(studio, 'POST', `/api/teams/${studio.teamId}/image-sets`, { name: options.setName })).body.imageSet.id as number;
  const tiles = new Map<string, Buffer>();
  const form = new FormData();
  for (const [i, tile] of seabedSet(options.seed, 8, 320, 240).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    const name = `${options.stem}-${i}.png`;
    tiles.set(name, png);
    form.append('files', new Blob([new Uint8Array(png)], { type: 'image/png' }), name);
  }
  const upload = await fetch(`${studio.server.url}/api/teams/${studio.teamId}/image-sets/${setId}/images`, { method: 'POST', headers: { Authorization: `Bearer ${studio.token}` }, body: form });
  expect(upload.status).toBe(201);
  expect((await call(studio, 'POST', `/api/teams/${studio.teamId}/image-sets/${setId}/split`, { heldOutFraction: 0.25, seed: 5 })).status).toBe(200);
  return { studio, setId, tiles, workers: [], scratch };
}

export async function closeWorkerStudio(w: WorkerStudio | undefined): Promise<void> {
  if (!w) return;
  for (const worker of w.workers) await worker.kill();
  await w.studio.server.stop();
  rmSync(w.scratch, { recursive: true, force: true });
}

/** Starts a run of b bits on the set (training and held-out images from its split) with the given settings. */
export async function startRun(w: WorkerStudio, name: string, bits: number, settings: object): Promise<number> {
  const res = await call(w.studio, 'POST', `/api/teams/${w.studio.teamId}/runs`, { name, trainingSetId: w.setId, heldOutSetId: w.setId, bits: { from: bits, to: bits }, ...settings });
  expect(res.status).toBe(201);
  return res.body.run.id as number;
}

/** The run's codebooks' checksums, smallest first. */
export async function checksums(w: WorkerStudio, runId: number): Promise<string[]> {
  const rows = (await w.studio.server.db.knex('codebooks').where({ run_id: runId }).orderBy('size').select('checksum')) as { checksum: string }[];
  return rows.map((r) => r.checksum);
}

/** Waits for the run to end, expects it succeeded, and returns its codebooks' checksums. */
export async function finished(w: WorkerStudio, runId: number): Promise<{ runId: number; checksums: string[] }> {
  const done = await waitForRun(w.studio, runId, terminal);
  expect({ state: done.state, error: done.error }).toEqual({ state: 'succeeded', error: null });
  return { runId, checksums: await checksums(w, runId) };
}

/** How many lines of a worker's log contain `marker` (a host logs each session it opens). */
export const logCount = (worker: WorkerProcess, marker: string) => worker.output().split('\n').filter((l) => l.includes(marker)).length;

/**
 * Waits until some worker that is not the coordinator (the one holding the run's training task) has logged `marker`
 * more often than in `before`, and returns it; undefined when none did within `tries` looks `intervalMs` apart.
 */
export async function hostToLose(
  w: WorkerStudio, marker: string, before: Map<WorkerProcess, number>, tries: number, intervalMs: number,
): Promise<WorkerProcess | undefined> {
  for (let i = 0; i < tries; i += 1) {
    const page = (await call(w.studio, 'GET', `/api/teams/${w.studio.teamId}/workers`)).body as { workers: { workerId: string; task: { kind: string } | null }[] };
    const coordinator = page.workers.find((x) => x.task?.kind === 'train')?.workerId;
    const victim = coordinator ? w.workers.find((x) => !x.output().includes(coordinator) && logCount(x, marker) > before.get(x)!) : undefined;
    if (victim) return victim;
    await new Promise((r) => setTimeout(r, intervalMs));
  }
  return undefined;
}

/**
 * Writes the run's training images into a new folder of the scratch folder in the studio's order (by upload), named so
 * that a sorted listing keeps that order, for the command line to train on; returns the folder.
 */
export async function writeTrainingImages(w: WorkerStudio, runId: number): Promise<string> {
  const rows = (await w.studio.server.db.knex('run_images as ri').join('images as i', 'i.id', 'ri.image_id').where({ 'ri.run_id': runId, 'ri.role': 'training' }).orderBy('i.id').select('i.file_name')) as { file_name: string }[];
  const dir = path.join(w.scratch, 'train');
  mkdirSync(dir);
  rows.forEach((r, i) => writeFileSync(path.join(dir, `${String(i).padStart(3, '0')}.png`), w.tiles.get(r.file_name)!));
  return dir;
}
