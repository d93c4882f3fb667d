import sharp from 'sharp';
import { INIT, type CreateRunBody } from '../contracts';
import type { Database } from '../db';
import type { Composition } from '../composition';
import type { Logger } from '../config';
import { jobHandlers } from '../jobs/handlers';
import type { JobQueue } from '../jobs/queue';
import type { JobDeps, JobHandlers } from '../jobs/types';
import type { ImageSetsService, ImageUploadsService, RunsService } from '../services';
import { demoAccounts } from './demo';
import { seabedSet } from './seabed-tiles';

/**
 * The demo team's survey material and a finished sweep, so a new user sees a curve, codebooks and a comparison at
 * once. The tiles are drawn procedurally (seabed-tiles.ts) from different seeds for training and held-out, stored
 * through the same upload path as any user's images, and the runs are trained and evaluated by the same job handlers
 * the runner uses — only driven to completion here, before the server listens. Sizes are kept small so the whole
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
  queue: JobQueue;
  handlers: JobHandlers;
  jobDeps: JobDeps;
  logger?: Logger;
}

/** The seed's dependencies from the app's composition: the same services, queue, handlers and pool the server runs. */
export function demoContentDeps(c: Composition): DemoContentDeps {
  return {
    db: c.db,
    services: c.services,
    queue: c.jobs.queue,
    handlers: jobHandlers,
    jobDeps: c.jobs.deps,
    logger: c.logger,
  };
}

async function tilePngs(seed: number, count: number, prefix: string) {
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

/**
 * Runs the demo team's queued jobs to the end, one at a time, through the registered handlers (the train job
 * queues the evaluate job, which is taken next). Only called on a database being seeded; a job of any other team
 * is put back untouched for the runner.
 */
async function drainDemoJobs(deps: DemoContentDeps, teamId: number): Promise<void> {
  for (;;) {
    const job = await deps.queue.claim();
    if (!job) return;
    if (job.teamId !== teamId) {
      await deps.queue.release(job.id);
      return;
    }
    try {
      await deps.handlers[job.kind](job, { signal: new AbortController().signal, progress: () => undefined, deps: deps.jobDeps });
      await deps.queue.complete(job.id);
    } catch (err) {
      await deps.queue.fail(job.id, err instanceof Error ? err.message : String(err));
      throw err;
    }
  }
}

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
  let createdRuns = 0;
  for (const body of demoRuns(trainingSetId, heldOutSetId)) {
    if (runNames.has(body.name)) continue;
    await services.runs.create(teamId, engineer.id, body);
    createdRuns += 1;
  }
  if (createdRuns > 0) await drainDemoJobs(deps, teamId);
  deps.logger?.info({ teamId, sets: createdSets, runs: createdRuns }, 'demo content seeded');
  return { sets: createdSets, runs: createdRuns };
}
