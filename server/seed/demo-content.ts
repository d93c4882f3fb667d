import sharp from 'sharp';
import { INIT, type CreateRunBody } from '../contracts';
import type { Database } from '../db';
import type { Composition } from '../composition';
import type { Logger } from '../config';
import type { JobRunner } from '../jobs/runner';
import type { ImageSetsService, ImageUploadsService, RunsService } from '../services';
import { demoAccounts } from './demo';
import { seabedSet } from './seabed-tiles';

/**
 * The demo team's survey material and a finished sweep, so a new user sees a curve, codebooks and a comparison at
 * once. The tiles are drawn procedurally (seabed-tiles.ts) from different seeds for training and held-out, stored
 * through the same upload path as any user's images, and the runs are trained and evaluated by the server's own job
 * runner, waited for here before the server listens. Sizes are kept small so the whole
 * seed takes a few seconds.
 */
export const demoSets = {
  training: { name: 'Survey tiles · training', description: 'Towed-camera thumbnails from the first survey leg (procedurally drawn).', seed: 101, count: 6 },
  heldOut: { name: 'Survey tiles · held-out', description: 'Thumbnails from a later leg, never trained on (procedurally drawn).', seed: 202, count: 3 },
} as const;

const TILE_WIDTH = 96;
const TILE_HEIGHT = 72;

export const demoRunNames = ['Luma 4×4 sweep', 'Luma 4×4 mean-removed sweep'] as const;

function demoRuns(trainingSetId: number, heldOutSetId: number): CreateRunBody[] {
  const common = { trainingSetId, heldOutSetId, patch: { width: 4, height: 4 }, color: 'luma' as const, bits: { from: 1, to: 6 }, init: INIT.split, seed: 11 };
  return [
    { ...common, name: demoRunNames[0], notes: 'Baseline: plain 4×4 luma blocks, 1 to 6 index bits.', meanBits: 0 },
    { ...common, name: demoRunNames[1], notes: 'Same blocks with the block mean coded in 4 bits and removed first.', meanBits: 4 },
  ];
}

export interface DemoContentDeps {
  db: Database;
  services: { imageSets: ImageSetsService; imageUploads: ImageUploadsService; runs: RunsService };
  /** The server's job runner: the demo runs are trained by it like any other. */
  runner: JobRunner;
  logger?: Logger;
}

/** The seed's dependencies from the app's composition: the same services and job runner the server runs. */
export function demoContentDeps(c: Composition): DemoContentDeps {
  return {
    db: c.db,
    services: c.services,
    runner: c.jobs.runner,
    logger: c.logger,
  };
}

/** The demo set's tiles as the PNG files the seed uploads (the structures bench reads the same images). */
export async function tilePngs(seed: number, count: number, prefix: string) {
  const tiles = seabedSet(seed, count, TILE_WIDTH, TILE_HEIGHT);
  return Promise.all(
    tiles.map(async (tile, i) => ({
      name: `${prefix}-${String(i + 1).padStart(2, '0')}-${tile.scene}.png`,
      data: await sharp(Buffer.from(tile.rgb.buffer, tile.rgb.byteOffset, tile.rgb.byteLength), { raw: { width: tile.width, height: tile.height, channels: 3 } })
        .png()
        .toBuffer(),
    })),
  );
}

const finished = (state: string) => state === 'succeeded' || state === 'failed' || state === 'cancelled';

/**
 * Lets the server's own job runner (started here if it is not yet) train and evaluate the demo runs, and waits
 * until each has ended: the demo goes through exactly the path a user's run takes. A demo run that fails is an
 * error of the seed, reported with the run's reason.
 */
async function awaitDemoRuns(deps: DemoContentDeps, teamId: number, runIds: number[]): Promise<void> {
  await deps.runner.start();
  const deadline = Date.now() + DEMO_RUN_TIMEOUT_MS;
  for (;;) {
    const runs = await Promise.all(runIds.map((id) => deps.db.repos.runs.findForTeam(teamId, id)));
    const failed = runs.find((r) => r && r.state !== 'succeeded' && finished(r.state));
    if (failed) throw new Error(`the demo run "${failed.name}" ${failed.state}${failed.error ? `: ${failed.error}` : ''}`);
    if (runs.every((r) => r && r.state === 'succeeded')) return;
    if (Date.now() > deadline) throw new Error('the demo runs did not finish in time');
    await new Promise((resolve) => setTimeout(resolve, 100));
  }
}

/** The demo's runs take seconds; this only keeps a broken start-up from waiting forever. */
const DEMO_RUN_TIMEOUT_MS = 10 * 60_000;

/** Adds what is missing of the demo content to the demo team; running it again changes nothing. */
export async function seedDemoContent(deps: DemoContentDeps, teamId: number): Promise<{ sets: number; runs: number }> {
  const { db, services } = deps;
  const engineer = await db.repos.users.findByEmail(demoAccounts.find((a) => a.role === 'engineer')!.email);
  if (!engineer) throw new Error('the demo accounts must be seeded first');

  const existing = await services.imageSets.list(teamId);
  let createdSets = 0;
  const setIdOf = async (
    spec: (typeof demoSets)[keyof typeof demoSets],
    prefix: string,
    role: 'training' | 'held-out',
  ): Promise<number> => {
    const found = existing.find((s) => s.name === spec.name);
    if (found) return found.id;
    const set = await services.imageSets.create(teamId, engineer.id, { name: spec.name, description: spec.description });
    const uploaded = await services.imageUploads.uploadBuffers(teamId, engineer.id, set.id, await tilePngs(spec.seed, spec.count, prefix));
    // Uploads arrive as training images; the later survey leg is marked held-out so the set reads as what it is.
    if (role === 'held-out') {
      await services.imageSets.update(teamId, set.id, {
        assignments: uploaded.images.map((image) => ({ imageId: image.id, role })),
      });
    }
    createdSets += 1;
    return set.id;
  };
  const trainingSetId = await setIdOf(demoSets.training, 'leg1', 'training');
  const heldOutSetId = await setIdOf(demoSets.heldOut, 'leg2', 'held-out');

  const runNames = new Set((await db.repos.runs.listForTeam(teamId)).map((r) => r.name));
  const created: number[] = [];
  for (const body of demoRuns(trainingSetId, heldOutSetId)) {
    if (runNames.has(body.name)) continue;
    created.push((await services.runs.create(teamId, engineer.id, body)).id);
  }
  const createdRuns = created.length;
  if (createdRuns > 0) await awaitDemoRuns(deps, teamId, created);
  deps.logger?.info({ teamId, sets: createdSets, runs: createdRuns }, 'demo content seeded');
  return { sets: createdSets, runs: createdRuns };
}
