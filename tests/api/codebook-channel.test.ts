// Channel errors and the firmware bundle through the API: PSNR against BER on the run's held-out images (equal to the
// engine's own), index assignment saved as a new codebook, the C bundle as a zip.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { channelCurve, decodeImage, encode, firmwareBundle, parseCodebook, reconstruct, shutdownEngineWorkers, type Codebook } from '../../server/engine';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { createSetWith, finishedRun, seabedPngs } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let heldOutIds: number[];
let codebookId: number;
let runId: number;
let root: string;

const W = 48;
const H = 32;
const url = (path: string) => `/api/teams/${team.teamId}/codebooks/${path}`;
const originalOf = async (imageId: number) => t.composition.contentStore.path((await t.db.knex('images').where({ id: imageId }).first()).sha256);
const binary = (res: request.Response, cb: (err: Error | null, body: Buffer) => void) => {
  const chunks: Buffer[] = [];
  res.on('data', (c: Buffer) => chunks.push(c));
  res.on('end', () => cb(null, Buffer.concat(chunks)));
};

async function exported(id: number): Promise<Codebook> {
  const res = await request(t.app).get(url(`${id}/export`)).set(bearer(team.viewer));
  expect(res.status).toBe(200);
  return parseCodebook(JSON.parse(res.text));
}

beforeAll(async () => {
  root = mkdtempSync(join(tmpdir(), 'cw-channel-api-'));
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Link Team');
  outsider = await signUp(t.app, { teamName: 'Other Link' });
  const trainingSetId = await createSetWith(t.app, team.engineer, 'training', await seabedPngs(51, 3, W, H));
  const heldOutSetId = await createSetWith(t.app, team.engineer, 'held-out', await seabedPngs(52, 2, W, H));
  heldOutIds = await t.db.knex('images').where({ set_id: heldOutSetId }).orderBy('id').pluck('id');
  runId = await finishedRun(t.app, team.engineer, {
    name: 'luma 4x4', trainingSetId, heldOutSetId, bits: { from: 5, to: 5 }, init: 'kmeans++', seed: 3, patch: { width: 4, height: 4 }, color: 'luma',
  });
  codebookId = (await t.db.knex('codebooks').where({ run_id: runId }).first()).id;
});

afterAll(async () => {
  rmSync(root, { recursive: true, force: true });
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.composition.reconstructionPool.destroy();
  await t?.close();
  await shutdownEngineWorkers();
});

describe('channel curve', () => {
  it('gives a viewer PSNR against BER on the run\'s held-out images, equal to the engine\'s own', async () => {
    const res = await request(t.app).get(url(`${codebookId}/channel?ber=0.001,0.05&seeds=3&resync=2`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const book = await exported(codebookId);
    const images = [];
    for (const id of heldOutIds) images.push(await decodeImage(await originalOf(id), 'luma'));
    const expected = await channelCurve(book, images, { bers: [0.001, 0.05], seeds: 3, resyncRows: 2 });
    expect(res.body).toMatchObject({ codebookId, images: 2, seeds: 3, resyncRows: 2, payloadBytes: expected.payloadBytes, expectedNote: null });
    expect(res.body.points.map((p: { mse: number }) => p.mse)).toEqual(expected.points.map((p) => p.mse));
    expect(res.body.points.map((p: { expectedMse: number }) => p.expectedMse)).toEqual(expected.points.map((p) => p.expectedMse));
    expect(res.body.rawBpp).toBeCloseTo((expected.payloadBytes * 8) / (2 * W * H), 12);
  });

  it('refuses bad rates with 400 and hides another team\'s codebook with 404', async () => {
    for (const q of ['ber=0.7', 'ber=x', 'ber=', 'seeds=0', 'seeds=17', 'resync=256', 'what=1']) {
      const res = await request(t.app).get(url(`${codebookId}/channel?${q}`)).set(bearer(team.viewer));
      expect(res.status, q).toBe(400);
      expect(res.body.error.code).toBeTruthy();
    }
    expect((await request(t.app).get(url(`${codebookId}/channel`)).set(bearer(outsider))).status).toBe(404);
  });

  it('refuses a curve that would cost more pixel decodes than the studio allows, naming the figures', async () => {
    // 1100 × 1000 pixels × 16 seeds × 12 rates = 2.1 × 10^8 decodes, over STUDIO_CHANNEL_MAX_PIXEL_RUNS (2 × 10^8).
    const big = await sharp({ create: { width: 1100, height: 1000, channels: 3, background: { r: 90, g: 110, b: 120 } } }).png().toBuffer();
    const setId = await createSetWith(t.app, team.engineer, 'large', [big]);
    const bers = Array.from({ length: 12 }, (_, i) => (i + 1) / 100).join(',');
    const res = await request(t.app).get(url(`${codebookId}/channel?setId=${setId}&seeds=16&ber=${bers}`)).set(bearer(team.viewer));
    expect(res.status).toBe(400);
    expect(res.body.error.message).toMatch(/^1 images × 16 seeds × 12 rates is 2\.11e\+8 pixel decodes, over the studio's 2e\+8/);
    // One seed at one rate fits.
    const fits = await request(t.app).get(url(`${codebookId}/channel?setId=${setId}&seeds=1&ber=0.01`)).set(bearer(team.viewer));
    expect(fits.status).toBe(200);
    expect(fits.body.images).toBe(1);
  });
});

describe('fixed-point rounding cost before export', () => {
  it('gives the float decoder\'s PSNR of the codebook\'s own evaluation, and the table\'s PSNR a hand-rounded table gives', async () => {
    const res = await request(t.app).get(url(`${codebookId}/firmware/rounding`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const book = await exported(codebookId);
    // The float decoder is the studio's, so its PSNR over the held-out images is the evaluation's (pooled over every
    // component of every image, PSNR = 10·log10(255²/MSE), common practice).
    const { evaluations } = (await request(t.app).get(url(`${codebookId}/evaluations`)).set(bearer(team.viewer))).body;
    expect(res.body.psnrFloat).toBeCloseTo(evaluations.at(-1).psnr, 9);
    // A plain codebook's table is 8-bit unsigned, one byte per component (issue 13: uint8 for plain codebooks).
    expect(res.body).toMatchObject({ codebookId, images: heldOutIds.length, tableType: 'uint8', fractionBits: 0, tableBytes: book.size * book.dimension });
    // The table's PSNR, recomputed here: every codeword rounded half up to 0..255 and the images coded and decoded with it.
    const rounded = { ...book, codewords: book.codewords.map((v) => Math.min(255, Math.max(0, Math.floor(v + 0.5)))) };
    let sse = 0;
    let n = 0;
    for (const id of heldOutIds) {
      const image = await decodeImage(await originalOf(id), 'luma');
      const back = reconstruct(rounded, (await encode(book, image)).encoded);
      for (let p = 0; p < back.length; p++) sse += (back[p] - image.pixels[p]) ** 2;
      n += back.length;
    }
    expect(res.body.psnrFixed).toBeCloseTo(10 * Math.log10((255 * 255) / (sse / n)), 6);
    // The decoder rounds codeword values half up to 8 bits anyway, so a plain codebook's uint8 table decodes to the same
    // pixels: no cost and no differing value (a mean-removed table's cost is checked in tests/unit/firmware).
    expect(res.body).toMatchObject({ costDb: 0, differing: 0, saturated: 0 });
  });

  it('refuses a codebook of another team with 404', async () => {
    expect((await request(t.app).get(url(`${codebookId}/firmware/rounding`)).set(bearer(outsider))).status).toBe(404);
  });
});

describe('reorder', () => {
  it('saves the reordered codebook as a new one for an engineer, with a lower channel distortion and the same reconstructions', async () => {
    const before = await t.db.knex('codebooks').count({ n: '*' }).first();
    const res = await request(t.app).post(url(`${codebookId}/reorder`)).set(bearer(team.engineer)).send({ ber: 0.01 });
    expect(res.status).toBe(201);
    expect(res.body.channelDistortionAfter).toBeLessThan(res.body.channelDistortionBefore);
    const newId = res.body.codebook.id;
    expect(newId).not.toBe(codebookId);
    expect(res.body.codebook.name).toMatch(/reordered for BER 0.01/);
    const after = await t.db.knex('codebooks').count({ n: '*' }).first();
    expect(Number(after!.n)).toBe(Number(before!.n) + 1);
    const original = await exported(codebookId);
    const reordered = await exported(newId);
    expect(reordered.checksum).not.toBe(original.checksum);
    const image = await decodeImage(await originalOf(heldOutIds[0]), 'luma');
    expect((await encode(reordered, image)).reconstruction).toEqual((await encode(original, image)).reconstruction);
    const audit = await t.db.knex('audit_log').where({ action: 'codebook.reordered', target_id: newId }).first();
    expect(audit).toBeTruthy();
  });

  it('refuses a viewer with 403 and a bad rate with 400, storing nothing', async () => {
    const count = async () => Number((await t.db.knex('codebooks').count({ n: '*' }).first())!.n);
    const n = await count();
    expect((await request(t.app).post(url(`${codebookId}/reorder`)).set(bearer(team.viewer)).send({ ber: 0.01 })).status).toBe(403);
    expect((await request(t.app).post(url(`${codebookId}/reorder`)).set(bearer(team.engineer)).send({ ber: 2 })).status).toBe(400);
    expect(await count()).toBe(n);
  });
});

describe('firmware zip', () => {
  it('gives a viewer the export\'s files in a zip that unpacks, compiles and decodes a raw file as the studio does', async () => {
    const res = await request(t.app).get(url(`${codebookId}/firmware`)).set(bearer(team.viewer)).buffer(true).parse(binary);
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^application\/zip/);
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="[A-Za-z0-9._-]+-firmware\.zip"$/);
    const book = await exported(codebookId);
    const zipPath = join(root, 'fw.zip');
    writeFileSync(zipPath, res.body as Buffer);
    const out = join(root, 'fw');
    // An outside reader: python3's zipfile (else Debian's unzip).
    if (spawnSync('python3', ['-c', 'import zipfile'], { stdio: 'ignore' }).status === 0) execFileSync('python3', ['-m', 'zipfile', '-e', zipPath, out]);
    else execFileSync('unzip', ['-q', zipPath, '-d', out]);
    const bundle = firmwareBundle(book);
    expect(readdirSync(out).sort()).toEqual(bundle.files.map((f) => f.name).sort());
    for (const f of bundle.files) expect(readFileSync(join(out, f.name), 'utf8')).toBe(f.text);
    execFileSync('bash', ['scripts/ensure-gcc.sh']);
    execFileSync('gcc', ['-std=c99', '-O2', '-o', join(out, 'decode_file'), ...readdirSync(out).filter((n) => n.endsWith('.c')).map((n) => join(out, n))]);
    const image = await decodeImage(await originalOf(heldOutIds[1]), 'luma');
    const { container, reconstruction } = await encode(book, image, { payload: 'raw' });
    writeFileSync(join(out, 'in.cwvq'), container);
    execFileSync(join(out, 'decode_file'), [join(out, 'in.cwvq'), join(out, 'out.pgm')]);
    const pgm = readFileSync(join(out, 'out.pgm'));
    expect(new Uint8Array(pgm.subarray(pgm.length - W * H))).toEqual(reconstruction);
  });

  it('refuses an unknown residual width with 400 and another team with 404', async () => {
    expect((await request(t.app).get(url(`${codebookId}/firmware?residual=int4`)).set(bearer(team.viewer))).status).toBe(400);
    expect((await request(t.app).get(url(`${codebookId}/firmware`)).set(bearer(outsider))).status).toBe(404);
  });
});

describe('raw rate beside the actual one', () => {
  it('reports per image the bytes encode --payload raw writes, and their bits over pixels on the codebook and the run curve', async () => {
    const book = await exported(codebookId);
    const evaluations = await request(t.app).get(url(`${codebookId}/evaluations`)).set(bearer(team.viewer));
    expect(evaluations.status).toBe(200);
    const latest = evaluations.body.evaluations.at(-1);
    let bytes = 0;
    for (const row of latest.images) {
      const image = await decodeImage(await originalOf(row.imageId), 'luma');
      const { container } = await encode(book, image, { payload: 'raw' });
      expect(row.rawBytes).toBe(container.length);
      expect(row.bppRaw).toBeCloseTo((container.length * 8) / (W * H), 12);
      bytes += container.length;
    }
    expect(latest.bppRaw).toBeCloseTo((bytes * 8) / (latest.images.length * W * H), 12);
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(curve.status).toBe(200);
    expect(curve.body.points[0].bppRaw).toBeCloseTo(latest.bppRaw, 12);
    // 5 index bits per 4×4 block and 12 × 8 blocks fill 60 bytes exactly: the fixed rate 5/16 bpp plus the 68-byte header.
    expect(latest.bppRaw).toBeCloseTo(5 / 16 + (68 * 8) / (W * H), 12);
  });
});
