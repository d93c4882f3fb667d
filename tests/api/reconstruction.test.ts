import { rmSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Express } from 'express';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { createApp } from '../../server/app';
import { evaluationTaskRunner } from '../../server/jobs/evaluation-tasks';
import { createReconstructionsService, type EvaluationTaskRunner } from '../../server/services';
import { sha256Of } from '../../server/storage/content-store';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { seabedPngs, createSetWith, finishedRun as runToSuccess } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let heldOutIds: number[];
let rgbRun: number;
let lumaRun: number;

const W = 40;
const H = 30;

const pngsOf = (seed: number, count: number) => seabedPngs(seed, count, W, H);

const setWith = (s: Session, name: string, files: Buffer[]) => createSetWith(t.app, s, name, files);

const finishedRun = (s: Session, body: object) => runToSuccess(t.app, s, body);

/** Keeps a binary response body as one Buffer. */
function collect(res: request.Response, done: (err: Error | null, body: Buffer) => void) {
  const chunks: Buffer[] = [];
  const stream = res as unknown as NodeJS.ReadableStream;
  stream.on('data', (c: Buffer) => chunks.push(c));
  stream.on('end', () => done(null, Buffer.concat(chunks)));
}

/** Decodes a PNG (or any stored original) to 8-bit interleaved pixels with sharp. */
async function rawOf(input: Buffer | string): Promise<{ data: Buffer; width: number; height: number; channels: number }> {
  // sharp expands grey files to sRGB on output unless told otherwise; a one-channel file is read as one channel.
  const { channels } = await sharp(input).metadata();
  const pipeline = channels === 1 ? sharp(input).extractChannel(0) : sharp(input).removeAlpha();
  const { data, info } = await pipeline.raw().toBuffer({ resolveWithObject: true });
  return { data, width: info.width, height: info.height, channels: info.channels };
}

async function stored(codebookId: number, imageId: number) {
  return t.db
    .knex('evaluation_images as m')
    .join('evaluations as e', 'e.id', 'm.evaluation_id')
    .where({ 'e.codebook_id': codebookId, 'm.image_id': imageId })
    .first('m.*');
}

async function codebookOf(runId: number, bits: number): Promise<number> {
  return (await t.db.knex('codebooks').where({ run_id: runId, bits }).first()).id;
}

const originalPath = async (imageId: number) => t.composition.contentStore.path((await t.db.knex('images').where({ id: imageId }).first()).sha256);

beforeAll(async () => {
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Reconstruction Team');
  outsider = await signUp(t.app, { teamName: 'Other Team' });
  const trainingSetId = await setWith(team.engineer, 'training', await pngsOf(31, 3));
  const heldOutSetId = await setWith(team.engineer, 'held-out', await pngsOf(32, 2));
  heldOutIds = await t.db.knex('images').where({ set_id: heldOutSetId }).orderBy('id').pluck('id');
  const common = { trainingSetId, heldOutSetId, bits: { from: 2, to: 4 }, init: 'split', seed: 3 };
  rgbRun = await finishedRun(team.engineer, { ...common, name: 'colour 2x2', patch: { width: 2, height: 2 }, color: 'rgb' });
  lumaRun = await finishedRun(team.engineer, { ...common, name: 'luma 4x4 mean-removed', patch: { width: 4, height: 4 }, color: 'luma', meanBits: 5 });
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.composition.reconstructionPool.destroy();
  await t?.close();
});

describe('reconstruction PNG', () => {
  it('decodes to the size of the image, and its MSE against the original is the stored evaluation MSE (rgb)', async () => {
    const codebookId = await codebookOf(rgbRun, 3);
    for (const imageId of heldOutIds) {
      const res = await request(t.app)
        .get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${imageId}?view=reconstruction`)
        .set(bearer(team.viewer))
        .buffer(true)
        .parse(collect);
      expect(res.status).toBe(200);
      expect(res.headers['content-type']).toBe('image/png');
      const recon = await rawOf(res.body as Buffer);
      // The original decoded independently by sharp: 8-bit sRGB, alpha-free.
      const original = await rawOf(await originalPath(imageId));
      expect([recon.width, recon.height, recon.channels]).toEqual([original.width, original.height, 3]);
      let sse = 0;
      for (let i = 0; i < original.data.length; i++) sse += (original.data[i] - recon.data[i]) ** 2;
      const row = await stored(codebookId, imageId);
      expect(row.mse).toBeGreaterThan(0);
      expect(sse / original.data.length).toBeCloseTo(row.mse, 9);
      expect(Number(res.headers['x-encoded-bytes'])).toBe(row.container_bytes);
    }
  });

  it('matches the stored MSE for a mean-removed luma codebook, with luma taken per BT.601', async () => {
    const codebookId = await codebookOf(lumaRun, 4);
    const imageId = heldOutIds[0];
    const res = await request(t.app)
      .get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${imageId}`)
      .set(bearer(team.viewer))
      .buffer(true)
      .parse(collect);
    expect(res.status).toBe(200);
    const recon = await rawOf(res.body as Buffer);
    const original = await rawOf(await originalPath(imageId));
    expect([recon.width, recon.height, recon.channels]).toEqual([W, H, 1]);
    let sse = 0;
    for (let p = 0; p < W * H; p++) {
      // Y' = 0.299 R' + 0.587 G' + 0.114 B' (Rec. ITU-R BT.601), unrounded, as the codec measures luma.
      const y = 0.299 * original.data[3 * p] + 0.587 * original.data[3 * p + 1] + 0.114 * original.data[3 * p + 2];
      sse += (y - recon.data[p]) ** 2;
    }
    const row = await stored(codebookId, imageId);
    // The codec holds luma in float32; six significant digits is what that precision leaves of the MSE.
    expect(Math.abs(sse / (W * H) - row.mse) / row.mse).toBeLessThan(1e-5);
  });

  it('shows the original view exactly as stored and an error map of the documented gain', async () => {
    const codebookId = await codebookOf(rgbRun, 2);
    const imageId = heldOutIds[1];
    const get = (view: string) =>
      request(t.app)
        .get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${imageId}?view=${view}`)
        .set(bearer(team.viewer))
        .buffer(true)
        .parse(collect);
    const original = await rawOf(await originalPath(imageId));
    const shown = await rawOf((await get('original')).body as Buffer);
    expect(shown.data.equals(original.data)).toBe(true);
    const recon = await rawOf((await get('reconstruction')).body as Buffer);
    const errorMap = await rawOf((await get('error')).body as Buffer);
    expect(errorMap.channels).toBe(1);
    for (let p = 0; p < W * H; p++) {
      let worst = 0;
      for (let c = 0; c < 3; c++) worst = Math.max(worst, Math.abs(original.data[3 * p + c] - recon.data[3 * p + c]));
      // The error map as server/engine/io/png.ts documents it: largest channel error × 4, clamped to 255.
      expect(errorMap.data[p]).toBe(Math.min(255, worst * 4));
    }
  });

  it('answers the figures of the evaluation as JSON for view=info', async () => {
    const codebookId = await codebookOf(rgbRun, 4);
    const imageId = heldOutIds[0];
    const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${imageId}?view=info`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const row = await stored(codebookId, imageId);
    expect(res.body.encodedBytes).toBe(row.container_bytes);
    expect(res.body.mse).toBe(row.mse);
    expect(res.body.psnr).toBe(row.psnr);
    expect(res.body.ssim).toBe(row.ssim);
    expect(res.body.bpp).toBe(row.bpp_actual);
    expect(res.body.lossless).toBe(false);
  });
});

describe('reconstruction access and input', () => {
  it('answers 404 to another team for the codebook, and for an image of another team', async () => {
    const codebookId = await codebookOf(rgbRun, 2);
    const path = `/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${heldOutIds[0]}`;
    expect((await request(t.app).get(path).set(bearer(outsider))).status).toBe(404);
    const theirSet = await setWith(outsider, 'theirs', await pngsOf(33, 1));
    const [theirImage] = await t.db.knex('images').where({ set_id: theirSet }).pluck('id');
    const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${theirImage}`).set(bearer(team.viewer));
    expect(res.status).toBe(404);
    expect(res.body.error.code).toBe('not_found');
    const own = await request(t.app).get(`/api/teams/${outsider.teamId}/codebooks/${codebookId}/reconstruction/${theirImage}`).set(bearer(outsider));
    expect(own.status).toBe(404);
  });

  it('refuses an unknown view with 400', async () => {
    const codebookId = await codebookOf(rgbRun, 2);
    const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${heldOutIds[0]}?view=sideways`).set(bearer(team.viewer));
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
  });

  it('codes a colour image with a luma codebook through its luma', async () => {
    const codebookId = await codebookOf(lumaRun, 2);
    const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${heldOutIds[0]}?view=info`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.body.width).toBe(W);
    expect(res.body.mse).toBeGreaterThan(0);
  });
});

const reconstructionUrl = (codebookId: number, imageId: number, view: string) =>
  `/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${imageId}?view=${view}`;

const getView = (app: Express, codebookId: number, imageId: number, view: string) =>
  request(app).get(reconstructionUrl(codebookId, imageId, view)).set(bearer(team.viewer)).buffer(true).parse(collect);

const storedReconstruction = (codebookId: number, imageId: number) => t.db.knex('reconstructions').where({ codebook_id: codebookId, image_id: imageId }).first();

/**
 * The real reconstruction task on the real pool, behind a gate: each call waits until the gate opens (or its signal
 * aborts) before the pool runs it, so a test can hold computations and see what the service does meanwhile.
 */
function gatedRunner() {
  const real = evaluationTaskRunner(t.composition.reconstructionPool);
  let open!: () => void;
  const gate = new Promise<void>((resolve) => (open = resolve));
  const calls: { signal?: AbortSignal; error?: unknown }[] = [];
  let active = 0;
  let maxActive = 0;
  const runTask: EvaluationTaskRunner = async (task, signal) => {
    const call: (typeof calls)[number] = { signal };
    calls.push(call);
    active += 1;
    maxActive = Math.max(maxActive, active);
    try {
      await Promise.race([gate, new Promise<void>((resolve) => signal?.addEventListener('abort', () => resolve(), { once: true }))]);
      return await real(task, signal);
    } catch (err) {
      call.error = err;
      throw err;
    } finally {
      active -= 1;
    }
  };
  return { runTask, calls, open, maxActive: () => maxActive };
}

/** The app with its reconstruction service built on `runTask` and these bounds; everything else as composed. */
function appWith(runTask: EvaluationTaskRunner, limits = { maxConcurrent: 2, maxQueued: 8 }) {
  const reconstructions = createReconstructionsService({ db: t.composition.db, store: t.composition.contentStore, runTask, ...limits });
  return { app: createApp({ ...t.composition, services: { ...t.composition.services, reconstructions } }), reconstructions };
}

// Each test below uses a codebook and image pair no earlier test has asked for, so nothing is stored for it yet.
describe('reconstructions kept in the content store', () => {
  it('computes a pair once and serves every later view from the store, byte for byte what it stored', async () => {
    const codebookId = await codebookOf(lumaRun, 3);
    const imageId = heldOutIds[0];
    const service = t.composition.services.reconstructions;
    const before = service.stats();
    const first = await getView(t.app, codebookId, imageId, 'reconstruction');
    expect(first.status).toBe(200);
    expect(service.stats().computed).toBe(before.computed + 1);
    const row = await storedReconstruction(codebookId, imageId);
    // node:crypto SHA-256 (FIPS 180-4) of the bytes served names the stored object.
    expect(sha256Of(first.body as Buffer)).toBe(row.reconstruction_sha256);
    for (const view of ['error', 'original', 'reconstruction']) {
      const again = await getView(t.app, codebookId, imageId, view);
      expect(again.status).toBe(200);
      expect(sha256Of(again.body as Buffer)).toBe(row[`${view}_sha256`]);
      expect(await t.composition.contentStore.has(row[`${view}_sha256`])).toBe(true);
    }
    const info = await request(t.app).get(reconstructionUrl(codebookId, imageId, 'info')).set(bearer(team.viewer));
    expect(info.body).toMatchObject({ codebookId, imageId, mse: row.mse, encodedBytes: row.encoded_bytes });
    expect(service.stats()).toMatchObject({ computed: before.computed + 1, fromStore: before.fromStore + 4 });
  });

  it('computes a pair again when a stored view file has gone missing', async () => {
    const codebookId = await codebookOf(lumaRun, 3);
    const imageId = heldOutIds[0];
    const row = await storedReconstruction(codebookId, imageId);
    rmSync(t.composition.contentStore.path(row.error_sha256));
    const service = t.composition.services.reconstructions;
    const before = service.stats().computed;
    const res = await getView(t.app, codebookId, imageId, 'error');
    expect(res.status).toBe(200);
    expect(sha256Of(res.body as Buffer)).toBe(row.error_sha256);
    expect(service.stats().computed).toBe(before + 1);
    expect(await t.composition.contentStore.has(row.error_sha256)).toBe(true);
  });

  it('shares one computation among concurrent requests for the same pair', async () => {
    const codebookId = await codebookOf(lumaRun, 3);
    const imageId = heldOutIds[1];
    const runner = gatedRunner();
    const { app, reconstructions } = appWith(runner.runTask);
    const pending = ['reconstruction', 'error', 'info'].map((view) => getView(app, codebookId, imageId, view).then((r) => r));
    await vi.waitFor(() => expect(reconstructions.stats().requests).toBe(3), { timeout: 10_000 });
    expect(runner.calls).toHaveLength(1);
    runner.open();
    const [recon, error, info] = await Promise.all(pending);
    expect([recon.status, error.status, info.status]).toEqual([200, 200, 200]);
    const row = await storedReconstruction(codebookId, imageId);
    expect(sha256Of(recon.body as Buffer)).toBe(row.reconstruction_sha256);
    expect(sha256Of(error.body as Buffer)).toBe(row.error_sha256);
    expect(runner.calls).toHaveLength(1);
    expect((await getView(app, codebookId, imageId, 'original')).status).toBe(200);
    expect(runner.calls).toHaveLength(1);
    expect(reconstructions.stats()).toMatchObject({ computed: 1, fromStore: 1, cancelled: 0 });
  });

  it('runs at most RECONSTRUCTION_MAX_CONCURRENT at once, queues RECONSTRUCTION_MAX_QUEUED more, and refuses the rest with 429', async () => {
    const runner = gatedRunner();
    const { app, reconstructions } = appWith(runner.runTask, { maxConcurrent: 1, maxQueued: 1 });
    const [lumaB2, rgbB4, lumaB4] = await Promise.all([codebookOf(lumaRun, 2), codebookOf(rgbRun, 4), codebookOf(lumaRun, 4)]);
    const imageId = heldOutIds[1];
    const running = getView(app, lumaB2, imageId, 'reconstruction').then((r) => r);
    await vi.waitFor(() => expect(runner.calls).toHaveLength(1), { timeout: 10_000 });
    const queued = getView(app, rgbB4, imageId, 'reconstruction').then((r) => r);
    await vi.waitFor(() => expect(reconstructions.stats().waiting).toBe(1), { timeout: 10_000 });
    const refused = await request(app).get(reconstructionUrl(lumaB4, imageId, 'info')).set(bearer(team.viewer));
    expect(refused.status).toBe(429);
    expect(refused.body.error).toMatchObject({ code: 'rate_limited', details: { running: 1, maxRunning: 1, waiting: 1, maxQueued: 1 } });
    expect(runner.calls).toHaveLength(1);
    runner.open();
    expect((await running).status).toBe(200);
    expect((await queued).status).toBe(200);
    expect(runner.calls).toHaveLength(2);
    expect(runner.maxActive()).toBe(1);
    expect(await storedReconstruction(lumaB4, imageId)).toBeUndefined();
  });

  it('aborts the computation when the client disconnects, and stores nothing', async () => {
    const codebookId = await codebookOf(rgbRun, 2);
    const imageId = heldOutIds[0];
    const runner = gatedRunner();
    const { app, reconstructions } = appWith(runner.runTask);
    const server: Server = createServer(app);
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
    try {
      const client = new AbortController();
      const url = `http://127.0.0.1:${(server.address() as AddressInfo).port}${reconstructionUrl(codebookId, imageId, 'reconstruction')}`;
      const response = fetch(url, { headers: bearer(team.viewer), signal: client.signal }).catch((err: unknown) => err);
      await vi.waitFor(() => expect(runner.calls).toHaveLength(1), { timeout: 10_000 });
      expect(runner.calls[0].signal?.aborted).toBe(false);
      client.abort();
      expect(((await response) as Error).name).toBe('AbortError');
      // The signal the pool task was given aborts, and the pool refuses to go on with it.
      await vi.waitFor(() => expect(runner.calls[0].error).toBeDefined(), { timeout: 10_000 });
      expect(runner.calls[0].signal?.aborted).toBe(true);
      expect((runner.calls[0].error as Error).name).toBe('AbortError');
      await vi.waitFor(() => expect(reconstructions.stats()).toMatchObject({ computed: 1, cancelled: 1, running: 0, requests: 0 }), { timeout: 10_000 });
      expect(await storedReconstruction(codebookId, imageId)).toBeUndefined();
    } finally {
      runner.open();
      server.closeAllConnections();
      await new Promise((resolve) => server.close(resolve));
    }
  });
});
