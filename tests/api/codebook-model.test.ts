// The codebook as a model of its training patches, through the API, as jobs run by the real runner on the server's
// own worker: anomaly maps and ranked lists with thresholds measured on the run's training images, and denoising
// with seeded noise; results stored with the job's success and read by its id.
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MODEL_CAUTION, type ModelJobView, type ModelResult } from '../../server/contracts';
import {
  anomalyModel, anomalyScores, codebookTrainingVectors, decodeImage, parseCodebook, shutdownEngineWorkers, type Codebook, type PixelImage,
} from '../../server/engine';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { createSetWith, finishedRun, seabedPngs } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let trainingIds: number[];
let heldOutIds: number[];
let probeSetId: number;
let codebookId: number;
let importedId: number;

const W = 48;
const H = 32;
// The probe image's bright square: 12×8 pixels at (16, 12), so 3×2 whole 4×4 blocks.
const inSquare = (x: number, y: number) => x >= 16 && x < 28 && y >= 12 && y < 20;

const url = (path: string) => `/api/teams/${team.teamId}/codebooks/${path}`;
const originalOf = async (imageId: number) => t.composition.contentStore.path((await t.db.knex('images').where({ id: imageId }).first()).sha256);

/** A seabed tile with a bright square pasted in. */
async function probePng(): Promise<Buffer> {
  const [tile] = await seabedPngs(77, 1, W, H);
  const { data } = await sharp(tile).removeAlpha().raw().toBuffer({ resolveWithObject: true });
  for (let y = 0; y < H; y += 1) for (let x = 0; x < W; x += 1) if (inSquare(x, y)) data.fill(250, (y * W + x) * 3, (y * W + x) * 3 + 3);
  return sharp(data, { raw: { width: W, height: H, channels: 3 } }).png().toBuffer();
}

const jobUrl = (path: string) => `/api/teams/${team.teamId}/model-jobs/${path}`;

type JobView = ModelJobView;

/** The job's result, which must be of `type`. */
function resultOf<T extends ModelResult['type']>(view: JobView, type: T): Extract<ModelResult, { type: T }> {
  expect(view.result?.type).toBe(type);
  return view.result as Extract<ModelResult, { type: T }>;
}

/** Starts a model job as `who` (202), then follows its status route until it ends. */
async function runJob(kind: 'anomaly' | 'denoise', id: number, body: object, who: Session = team.viewer): Promise<JobView> {
  const started = await request(t.app).post(url(`${id}/${kind}-jobs`)).set(bearer(who)).send(body);
  expect(started.status, JSON.stringify(started.body)).toBe(202);
  expect(started.body.job).toMatchObject({ kind, state: 'queued', codebookId: id });
  expect(started.body.result).toBeNull();
  return waitForJob(started.body.job.id);
}

async function waitForJob(jobId: number): Promise<JobView> {
  for (let i = 0; i < 1200; i += 1) {
    const res = await request(t.app).get(jobUrl(String(jobId))).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    if (['succeeded', 'failed', 'cancelled'].includes(res.body.job.state)) return res.body as JobView;
    await new Promise((r) => setTimeout(r, 50));
  }
  throw new Error(`job ${jobId} did not end`);
}

async function exported(id: number): Promise<Codebook> {
  const res = await request(t.app).get(url(`${id}/export`)).set(bearer(team.viewer));
  expect(res.status).toBe(200);
  return parseCodebook(JSON.parse(res.text));
}

beforeAll(async () => {
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Survey Team');
  outsider = await signUp(t.app, { teamName: 'Other Survey' });
  const trainingSetId = await createSetWith(t.app, team.engineer, 'training', await seabedPngs(41, 4, W, H));
  const heldOutSetId = await createSetWith(t.app, team.engineer, 'held-out', await seabedPngs(42, 2, W, H));
  probeSetId = await createSetWith(t.app, team.engineer, 'probe', [await probePng(), ...(await seabedPngs(43, 1, W, H))]);
  trainingIds = await t.db.knex('images').where({ set_id: trainingSetId }).orderBy('id').pluck('id');
  heldOutIds = await t.db.knex('images').where({ set_id: heldOutSetId }).orderBy('id').pluck('id');
  const runId = await finishedRun(t.app, team.engineer, {
    name: 'luma 4x4', trainingSetId, heldOutSetId, bits: { from: 4, to: 4 }, init: 'kmeans++', seed: 3, patch: { width: 4, height: 4 }, color: 'luma',
  });
  codebookId = (await t.db.knex('codebooks').where({ run_id: runId }).first()).id;
  const doc = JSON.parse((await request(t.app).get(url(`${codebookId}/export`)).set(bearer(team.engineer))).text);
  const imported = await request(t.app).post(url('import')).set(bearer(team.engineer)).send(doc);
  expect(imported.status).toBe(201);
  importedId = imported.body.codebook.id;
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.composition.reconstructionPool.destroy();
  await t?.close();
  await shutdownEngineWorkers();
});

describe('anomaly map job', () => {
  it('gives a viewer every block\'s scores, thresholds measured on the run\'s training patches, equal to the engine\'s own', async () => {
    const imageId = heldOutIds[0];
    const done = await runJob('anomaly', codebookId, { imageId, rate: 0.01 });
    expect(done.job).toMatchObject({ state: 'succeeded', error: null, kind: 'anomaly' });
    expect(done.job.servedBy.length).toBe(1);
    expect(done.caution).toBe(MODEL_CAUTION);
    const body = resultOf(done, 'anomaly-map');
    expect(body).toMatchObject({ type: 'anomaly-map', codebookId, imageId, width: W, height: H, blockWidth: 4, blockHeight: 4, blocksX: 12, blocksY: 8, rate: 0.01, score: 'nll', calibrated: true, varianceSource: 'training-vectors', caution: MODEL_CAUTION });
    // The same engine calls on the originals in process: training patches drawn as the training job drew them.
    const book = await exported(codebookId);
    const training: PixelImage[] = [];
    for (const id of trainingIds) training.push(await decodeImage(await originalOf(id), 'luma'));
    const vectors = codebookTrainingVectors(book, training);
    expect(body.trainingBlocks).toBe(book.training.vectorCount);
    const model = anomalyModel(book, vectors, { rate: 0.01 });
    const expected = anomalyScores(book, model, await decodeImage(await originalOf(imageId), 'luma'));
    expect(body.nll).toEqual(expected.blocks.map((b) => b.nll));
    expect(body.distance).toEqual(expected.blocks.map((b) => b.distance));
    expect(body.thresholds).toEqual(model.calibration.thresholds);
    expect(Math.abs(body.flaggedTrainingBlocks!.nll - 0.01 * body.trainingBlocks)).toBeLessThanOrEqual(1);
    // The result is stored with the job, keyed by its id: read again, it is the same.
    const again = await request(t.app).get(jobUrl(String(done.job.id))).set(bearer(team.engineer));
    expect(again.body.result).toEqual(body);
    const audit = await t.db.knex('audit_log').where({ action: 'anomaly.requested', target_id: String(codebookId) }).select('details');
    expect(audit.map((a) => (typeof a.details === 'string' ? JSON.parse(a.details) : a.details).jobId)).toContain(done.job.id);
  });

  it('answers the same bits again for the same request, and another rate and score as a fresh calibration would', async () => {
    const first = await runJob('anomaly', codebookId, { imageId: heldOutIds[1], rate: 0.05, score: 'distance' });
    const second = await runJob('anomaly', codebookId, { imageId: heldOutIds[1], rate: 0.05, score: 'distance' });
    expect(second.job.id).not.toBe(first.job.id);
    expect(second.result).toEqual(first.result);
    const book = await exported(codebookId);
    const training: PixelImage[] = [];
    for (const id of trainingIds) training.push(await decodeImage(await originalOf(id), 'luma'));
    const model = anomalyModel(book, codebookTrainingVectors(book, training), { rate: 0.05, score: 'distance' });
    const firstMap = resultOf(first, 'anomaly-map');
    expect(firstMap.thresholds).toEqual(model.calibration.thresholds);
    const expected = anomalyScores(book, model, await decodeImage(await originalOf(heldOutIds[1]), 'luma'));
    expect(firstMap.flagged).toEqual(expected.blocks.flatMap((b, i) => (b.flagged ? [i] : [])));
    expect(firstMap.flagged.length).toBeGreaterThan(0);
  });

  it('answers an imported codebook with scores but no threshold, since it has no training images here', async () => {
    const done = await runJob('anomaly', importedId, { imageId: heldOutIds[0] });
    expect(done.result).toMatchObject({ calibrated: false, thresholds: null, flaggedTrainingBlocks: null, flagged: [], trainingBlocks: 0, varianceSource: 'stored-distortion' });
    expect(resultOf(done, 'anomaly-map').nll).toHaveLength(96);
  });

  it('refuses a bad body with 400 and writes no job, another team\'s member with 404 and no session with 401', async () => {
    const jobs = async () => Number((await t.db.knex('jobs').count({ n: '*' }).first())!.n);
    const before = await jobs();
    for (const body of [{ imageId: heldOutIds[0], rate: 0.9 }, { imageId: heldOutIds[0], rate: '0.01' }, { imageId: heldOutIds[0], score: 'odd' }, { imageId: heldOutIds[0], setId: probeSetId }, { imageId: heldOutIds[0], other: 1 }]) {
      const res = await request(t.app).post(url(`${codebookId}/anomaly-jobs`)).set(bearer(team.viewer)).send(body);
      expect(res.status, JSON.stringify(body)).toBe(400);
      expect(res.body.error.code).toBeDefined();
    }
    expect((await request(t.app).post(url(`${codebookId}/anomaly-jobs`)).set(bearer(team.viewer)).send({ imageId: 999999 })).status).toBe(404);
    expect((await request(t.app).post(url(`${codebookId}/anomaly-jobs`)).set(bearer(outsider)).send({ imageId: heldOutIds[0] })).status).toBe(404);
    const foreign = await request(t.app).post(`/api/teams/${outsider.teamId}/codebooks/${codebookId}/anomaly-jobs`).set(bearer(outsider)).send({ imageId: heldOutIds[0] });
    expect(foreign.status).toBe(404);
    expect((await request(t.app).post(url(`${codebookId}/anomaly-jobs`)).send({ imageId: heldOutIds[0] })).status).toBe(401);
    expect(await jobs()).toBe(before);
  });
});

describe('anomaly list job', () => {
  it('ranks the blocks of a pasted bright square first over a set, and flags them', async () => {
    const done = await runJob('anomaly', codebookId, { setId: probeSetId, limit: 6, rate: 0.001 });
    const body = resultOf(done, 'anomaly-list');
    expect(body.images).toBe(2);
    expect(body.blocks).toHaveLength(6);
    const probeId = (await t.db.knex('images').where({ set_id: probeSetId }).orderBy('id').first()).id;
    for (const b of body.blocks) {
      expect(b.imageId).toBe(probeId);
      expect(inSquare(b.x, b.y), `${b.x},${b.y}`).toBe(true);
      expect(b).toMatchObject({ width: 4, height: 4, flagged: true });
    }
  });

  it('ranks the run\'s held-out images by default, and asks an imported codebook for a set', async () => {
    const done = await runJob('anomaly', codebookId, { limit: 3 });
    const list = resultOf(done, 'anomaly-list');
    expect(list.images).toBe(2);
    expect(list.blocks.map((b) => heldOutIds.includes(b.imageId))).toEqual([true, true, true]);
    const nll = list.blocks.map((b) => b.nll);
    expect([...nll].sort((a, b) => b - a)).toEqual(nll);
    const imported = await request(t.app).post(url(`${importedId}/anomaly-jobs`)).set(bearer(team.viewer)).send({});
    expect(imported.status).toBe(400);
    expect(imported.body.error.message).toMatch(/setId/);
    expect((await request(t.app).post(url(`${codebookId}/anomaly-jobs`)).set(bearer(team.viewer)).send({ setId: 999999 })).status).toBe(404);
  });
});

describe('denoise job', () => {
  it('adds seeded noise and removes it with both estimators, the posterior mean raising PSNR over the noisy image', async () => {
    const body = { imageId: heldOutIds[1], sigma: 20, seed: 5 };
    const done = await runJob('denoise', codebookId, body);
    expect(done.job).toMatchObject({ state: 'succeeded', kind: 'denoise' });
    const result = resultOf(done, 'denoise');
    expect(result).toMatchObject({ type: 'denoise', codebookId, imageId: heldOutIds[1], width: W, height: H, sigma: 20, seed: 5, step: 1, varianceSource: 'cell-distortion', caution: MODEL_CAUTION });
    expect(result.psnr.mean!).toBeGreaterThan(result.psnr.noisy!);
    const pngs: Buffer[] = [];
    for (const view of ['clean', 'noisy', 'hard', 'mean'] as const) {
      expect(result.views[view]).toBe(jobUrl(`${done.job.id}/views/${view}`));
      const res = await request(t.app).get(result.views[view]).set(bearer(team.viewer)).buffer(true);
      expect(res.status).toBe(200);
      expect(res.headers['content-type']).toBe('image/png');
      const meta = await sharp(res.body as Buffer).metadata();
      expect([meta.format, meta.width, meta.height], view).toEqual(['png', W, H]);
      pngs.push(res.body as Buffer);
    }
    // The same seed gives the same noise and so the same images, bit for bit, from another job.
    const again = await runJob('denoise', codebookId, body, team.engineer);
    const noisy = await request(t.app).get(resultOf(again, 'denoise').views.noisy).set(bearer(team.viewer)).buffer(true);
    expect(Buffer.compare(noisy.body as Buffer, pngs[1])).toBe(0);
    expect(resultOf(again, 'denoise').psnr).toEqual(result.psnr);
    expect((await request(t.app).get(result.views.noisy).set(bearer(outsider))).status).toBe(404);
    expect((await request(t.app).get(jobUrl(`${done.job.id}/views/other`)).set(bearer(team.viewer))).status).toBe(400);
  });

  it('refuses a missing or out-of-range σ and a step of 0 with 400', async () => {
    for (const q of [{}, { sigma: 200 }, { sigma: -1 }, { sigma: 20, step: 0 }, { sigma: 20, seed: 'x' }]) {
      const res = await request(t.app).post(url(`${codebookId}/denoise-jobs`)).set(bearer(team.viewer)).send({ imageId: heldOutIds[0], ...q });
      expect(res.status, JSON.stringify(q)).toBe(400);
    }
  });
});

describe('finding an earlier job of the same request', () => {
  const jobCount = async () => Number((await t.db.knex('jobs').whereIn('kind', ['anomaly', 'denoise']).count({ n: '*' }))[0].n);

  it('answers null and queues nothing before the request was made, then the job it queued, with its stored result', async () => {
    const body = { imageId: heldOutIds[1], sigma: 30, seed: 41, step: 4 };
    const before = await jobCount();
    const none = await request(t.app).post(url(`${codebookId}/denoise-jobs/find`)).set(bearer(team.viewer)).send(body);
    expect(none.status).toBe(200);
    expect(none.body).toEqual({ job: null });
    expect(await jobCount()).toBe(before);
    const done = await runJob('denoise', codebookId, body);
    expect(done.job.state).toBe('succeeded');
    const found = await request(t.app).post(url(`${codebookId}/denoise-jobs/find`)).set(bearer(team.viewer)).send(body);
    expect(found.status).toBe(200);
    expect(found.body.job.job.id).toBe(done.job.id);
    expect(found.body.job.result).toEqual(done.result);
    // Another seed is another request: nothing stored for it.
    const other = await request(t.app).post(url(`${codebookId}/denoise-jobs/find`)).set(bearer(team.viewer)).send({ ...body, seed: 42 });
    expect(other.body).toEqual({ job: null });
    expect(await jobCount()).toBe(before + 1);
  });

  it('matches an anomaly list by the images the default request ranks, not by another limit', async () => {
    const body = { rate: 0.001, limit: 3 };
    const done = await runJob('anomaly', codebookId, body);
    const found = await request(t.app).post(url(`${codebookId}/anomaly-jobs/find`)).set(bearer(team.viewer)).send(body);
    expect(found.body.job.job.id).toBe(done.job.id);
    expect((await request(t.app).post(url(`${codebookId}/anomaly-jobs/find`)).set(bearer(team.viewer)).send({ ...body, limit: 4 })).body).toEqual({ job: null });
  });

  it('refuses a bad body with 400, another team\'s member with 404 and no session with 401', async () => {
    expect((await request(t.app).post(url(`${codebookId}/denoise-jobs/find`)).set(bearer(team.viewer)).send({ imageId: heldOutIds[0] })).status).toBe(400);
    expect((await request(t.app).post(url(`${codebookId}/anomaly-jobs/find`)).set(bearer(outsider)).send({ rate: 0.01 })).status).toBe(404);
    expect((await request(t.app).post(url(`${codebookId}/anomaly-jobs/find`)).send({ rate: 0.01 })).status).toBe(401);
  });
});

describe('a model job\'s life', () => {
  it('cancels a queued job, refuses to cancel it again with 409, and fails a job whose image went away with the reason', async () => {
    const runner = t.composition.jobs.runner;
    await runner.stop();
    let started = false;
    try {
      const queued = await request(t.app).post(url(`${codebookId}/denoise-jobs`)).set(bearer(team.viewer)).send({ imageId: heldOutIds[0], sigma: 10 });
      expect(queued.status).toBe(202);
      // Any member may start a computation; stopping one every member who asked the same shares is an engineer's.
      expect((await request(t.app).post(jobUrl(`${queued.body.job.id}/cancel`)).set(bearer(team.viewer))).status).toBe(403);
      const cancelled = await request(t.app).post(jobUrl(`${queued.body.job.id}/cancel`)).set(bearer(team.engineer));
      expect(cancelled.status).toBe(200);
      expect(cancelled.body).toMatchObject({ job: { state: 'cancelled' }, result: null });
      const twice = await request(t.app).post(jobUrl(`${queued.body.job.id}/cancel`)).set(bearer(team.engineer));
      expect(twice.status).toBe(409);
      expect((await request(t.app).post(jobUrl(`${queued.body.job.id}/cancel`)).set(bearer(outsider))).status).toBe(404);

      // An image deleted after the job was queued: the job fails and says why.
      const doomed = await createSetWith(t.app, team.engineer, 'doomed', await seabedPngs(44, 1, W, H));
      const doomedImage = (await t.db.knex('images').where({ set_id: doomed }).first()).id;
      const failing = await request(t.app).post(url(`${codebookId}/anomaly-jobs`)).set(bearer(team.viewer)).send({ imageId: doomedImage });
      expect(failing.status).toBe(202);
      expect((await request(t.app).delete(`/api/teams/${team.teamId}/images/${doomedImage}`).set(bearer(team.admin))).status).toBe(204);
      await runner.start();
      started = true;
      const failed = await waitForJob(failing.body.job.id);
      expect(failed.job).toMatchObject({ state: 'failed', error: expect.stringMatching(/deleted/) });
      expect(failed.result).toBeNull();
    } finally {
      if (!started) await runner.start();
    }
  });

  it('stops a running denoise job when it is cancelled, and stores nothing for it', async () => {
    // A large image at step 1 keeps the job running for a while (about 15 s here): every pixel position is a patch.
    const big = await createSetWith(t.app, team.engineer, 'large', await seabedPngs(45, 1, 1600, 1200));
    const imageId = (await t.db.knex('images').where({ set_id: big }).first()).id;
    const started = await request(t.app).post(url(`${codebookId}/denoise-jobs`)).set(bearer(team.viewer)).send({ imageId, sigma: 20, step: 1 });
    expect(started.status).toBe(202);
    const jobId = started.body.job.id as number;
    let state = 'queued';
    for (let i = 0; i < 400 && state === 'queued'; i += 1) {
      state = (await request(t.app).get(jobUrl(String(jobId))).set(bearer(team.viewer))).body.job.state;
      if (state === 'queued') await new Promise((r) => setTimeout(r, 25));
    }
    expect(state).toBe('running');
    const cancelled = await request(t.app).post(jobUrl(`${jobId}/cancel`)).set(bearer(team.engineer));
    expect(cancelled.status).toBe(200);
    expect(cancelled.body.job.cancelRequested).toBe(true);
    const ended = await waitForJob(jobId);
    expect(ended.job.state).toBe('cancelled');
    expect(ended.result).toBeNull();
    expect(await t.db.knex('model_results').where({ job_id: jobId }).first()).toBeUndefined();
    expect(await t.db.knex('model_result_views').where({ job_id: jobId }).first()).toBeUndefined();
  });
});
