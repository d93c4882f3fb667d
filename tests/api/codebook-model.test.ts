// The codebook as a model of its training patches, through the API: anomaly maps and ranked lists with thresholds
// measured on the run's training images, and denoising with seeded noise.
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MODEL_CAUTION } from '../../server/contracts';
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

describe('anomaly map', () => {
  it('gives a viewer every block\'s scores, thresholds measured on the run\'s training patches, equal to the engine\'s own', async () => {
    const imageId = heldOutIds[0];
    const res = await request(t.app).get(url(`${codebookId}/anomaly/${imageId}?rate=0.01`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const body = res.body;
    expect(body).toMatchObject({ codebookId, imageId, width: W, height: H, blockWidth: 4, blockHeight: 4, blocksX: 12, blocksY: 8, rate: 0.01, score: 'nll', calibrated: true, varianceSource: 'training-vectors', caution: MODEL_CAUTION });
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
    expect(Math.abs(body.flaggedTrainingBlocks.nll - 0.01 * body.trainingBlocks)).toBeLessThanOrEqual(1);
  });

  it('scores the training patches once per codebook, whatever rate or image is asked after', async () => {
    const service = t.composition.services.codebookModel;
    await request(t.app).get(url(`${codebookId}/anomaly/${heldOutIds[0]}`)).set(bearer(team.viewer));
    const before = service.stats().calibrations;
    const res = await request(t.app).get(url(`${codebookId}/anomaly/${heldOutIds[1]}?rate=0.05&score=distance`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect((await request(t.app).get(url(`${codebookId}/anomalies?rate=0.02`)).set(bearer(team.viewer))).status).toBe(200);
    expect(service.stats().calibrations).toBe(before);
    // The kept calibration answers the new rate exactly as a fresh one would.
    const book = await exported(codebookId);
    const training: PixelImage[] = [];
    for (const id of trainingIds) training.push(await decodeImage(await originalOf(id), 'luma'));
    const model = anomalyModel(book, codebookTrainingVectors(book, training), { rate: 0.05, score: 'distance' });
    expect(res.body.thresholds).toEqual(model.calibration.thresholds);
    const expected = anomalyScores(book, model, await decodeImage(await originalOf(heldOutIds[1]), 'luma'));
    expect(res.body.flagged).toEqual(expected.blocks.flatMap((b, i) => (b.flagged ? [i] : [])));
    expect(res.body.flagged.length).toBeGreaterThan(0);
  });

  it('answers an imported codebook with scores but no threshold, since it has no training images here', async () => {
    const res = await request(t.app).get(url(`${importedId}/anomaly/${heldOutIds[0]}`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ calibrated: false, thresholds: null, flaggedTrainingBlocks: null, flagged: [], trainingBlocks: 0, varianceSource: 'stored-distortion' });
    expect(res.body.nll).toHaveLength(96);
  });

  it('refuses a rate outside its range and an unknown score with 400, and another team\'s member with 404', async () => {
    for (const q of ['rate=0.9', 'rate=', 'rate=0x1', 'score=odd', 'other=1']) {
      const res = await request(t.app).get(url(`${codebookId}/anomaly/${heldOutIds[0]}?${q}`)).set(bearer(team.viewer));
      expect(res.status, q).toBe(400);
      expect(res.body.error.code).toBeDefined();
    }
    expect((await request(t.app).get(url(`${codebookId}/anomaly/${heldOutIds[0]}`)).set(bearer(outsider))).status).toBe(404);
    const foreign = await request(t.app).get(`/api/teams/${outsider.teamId}/codebooks/${codebookId}/anomaly/${heldOutIds[0]}`).set(bearer(outsider));
    expect(foreign.status).toBe(404);
    expect((await request(t.app).get(url(`${codebookId}/anomaly/${heldOutIds[0]}`))).status).toBe(401);
  });
});

describe('anomaly list', () => {
  it('ranks the blocks of a pasted bright square first over a set, and flags them', async () => {
    const res = await request(t.app).get(url(`${codebookId}/anomalies?setId=${probeSetId}&limit=6&rate=0.001`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.body.images).toBe(2);
    expect(res.body.blocks).toHaveLength(6);
    const probeId = (await t.db.knex('images').where({ set_id: probeSetId }).orderBy('id').first()).id;
    for (const b of res.body.blocks) {
      expect(b.imageId).toBe(probeId);
      expect(inSquare(b.x, b.y), `${b.x},${b.y}`).toBe(true);
      expect(b).toMatchObject({ width: 4, height: 4, flagged: true });
    }
  });

  it('ranks the run\'s held-out images by default, and asks an imported codebook for a set', async () => {
    const res = await request(t.app).get(url(`${codebookId}/anomalies?limit=3`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.body.images).toBe(2);
    expect(res.body.blocks.map((b: { imageId: number }) => heldOutIds.includes(b.imageId))).toEqual([true, true, true]);
    const nll = res.body.blocks.map((b: { nll: number }) => b.nll);
    expect([...nll].sort((a, b) => b - a)).toEqual(nll);
    const imported = await request(t.app).get(url(`${importedId}/anomalies`)).set(bearer(team.viewer));
    expect(imported.status).toBe(400);
    expect(imported.body.error.message).toMatch(/setId/);
    expect((await request(t.app).get(url(`${codebookId}/anomalies?setId=999999`)).set(bearer(team.viewer))).status).toBe(404);
  });
});

describe('denoise', () => {
  it('adds seeded noise and removes it with both estimators, the posterior mean raising PSNR over the noisy image', async () => {
    const q = `${codebookId}/denoise/${heldOutIds[1]}?sigma=20&seed=5`;
    const res = await request(t.app).get(url(q)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ codebookId, imageId: heldOutIds[1], width: W, height: H, sigma: 20, seed: 5, step: 1, varianceSource: 'cell-distortion', caution: MODEL_CAUTION });
    expect(res.body.psnr.mean).toBeGreaterThan(res.body.psnr.noisy);
    for (const view of ['clean', 'noisy', 'hard', 'mean']) {
      const png = Buffer.from(res.body.views[view].replace(/^data:image\/png;base64,/, ''), 'base64');
      const meta = await sharp(png).metadata();
      expect([meta.format, meta.width, meta.height], view).toEqual(['png', W, H]);
    }
    // The same seed gives the same noise and so the same answer.
    const again = await request(t.app).get(url(q)).set(bearer(team.viewer));
    expect(again.body.views).toEqual(res.body.views);
  });

  it('refuses a missing or out-of-range σ and a step of 0 with 400', async () => {
    for (const q of ['', 'sigma=200', 'sigma=-1', 'sigma=20&step=0', 'sigma=20&seed=x']) {
      const res = await request(t.app).get(url(`${codebookId}/denoise/${heldOutIds[0]}?${q}`)).set(bearer(team.viewer));
      expect(res.status, q).toBe(400);
    }
  });
});
