import { createHash } from 'node:crypto';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bjontegaard, CURVE_CSV_COLUMNS, DEFAULT_BD_METHOD, IMAGE_CSV_COLUMNS } from '../../server/engine';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { seabedPngs, createSetWith, waitForRun as pollRun } from '../helpers/studio';
import { mailFor, waitForMail } from '../helpers/mailbox';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let trainingSetId: number;
let heldOutSetId: number;
let runId: number;

const W = 64;
const H = 48;
const PATCH = { width: 4, height: 4 };

const pngsOf = (seed: number, count: number) => seabedPngs(seed, count, W, H);

const setWith = (s: Session, name: string, files: Buffer[]) => createSetWith(t.app, s, name, files);

const waitForRun = (s: Session, id: number) => pollRun(t.app, s, id);

async function waitForJob(jobId: number): Promise<{ state: string; error: string | null }> {
  for (;;) {
    const job = await t.db.knex('jobs').where({ id: jobId }).first();
    if (['succeeded', 'failed', 'cancelled'].includes(job.state)) return job;
    await new Promise((r) => setTimeout(r, 200));
  }
}

beforeAll(async () => {
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Evaluation Team');
  outsider = await signUp(t.app, { teamName: 'Other Team' });
  trainingSetId = await setWith(team.engineer, 'training tiles', await pngsOf(21, 4));
  heldOutSetId = await setWith(team.engineer, 'held-out tiles', await pngsOf(22, 3));
  const created = await request(t.app)
    .post(`/api/teams/${team.teamId}/runs`)
    .set(bearer(team.engineer))
    .send({ name: 'Ripple sweep', trainingSetId, heldOutSetId, patch: PATCH, color: 'luma', meanBits: 0, bits: { from: 1, to: 5 }, init: 'split', seed: 7 });
  expect(created.status).toBe(201);
  runId = created.body.run.id;
  const run = await waitForRun(team.engineer, runId);
  expect(run.error).toBeNull();
  expect(run.state).toBe('succeeded');
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('run curve', () => {
  it('falls in distortion as the bit budget grows, one point per codebook', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const points = res.body.points as { bits: number; size: number; mse: number; psnr: number; ssim: number }[];
    expect(points.map((p) => p.bits)).toEqual([1, 2, 3, 4, 5]);
    for (let i = 1; i < points.length; i++) {
      expect(points[i].mse).toBeLessThan(points[i - 1].mse);
      expect(points[i].psnr).toBeGreaterThan(points[i - 1].psnr);
    }
    for (const p of points) {
      // PSNR = 10·log10(255² / MSE) for 8-bit data (common practice).
      expect(p.psnr).toBeCloseTo(10 * Math.log10((255 * 255) / p.mse), 10);
      expect(p.ssim).toBeGreaterThan(0);
      expect(p.ssim).toBeLessThanOrEqual(1);
    }
  });

  it('reports the fixed rate as exactly bits over patch pixels', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    for (const p of res.body.points) {
      // A fixed-length index of b bits per w×h block costs b/(w·h) bits per pixel (common practice).
      expect(p.bppFixed).toBe(p.bits / (PATCH.width * PATCH.height));
      // The container adds a header and pads each image's last block row and column, so it never undercuts the fixed rate.
      expect(p.bppActual).toBeGreaterThan(p.bppFixed);
      expect(p.bppEntropy).toBeLessThanOrEqual(p.bppFixed + 1e-12);
    }
  });

  it('carries JPEG and WebP baselines whose rate rises with quality', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    const { jpeg, webp, avif } = res.body.baselines;
    expect(jpeg.length).toBeGreaterThanOrEqual(5);
    expect(webp.length).toBe(jpeg.length);
    for (const curve of [jpeg, webp, avif]) {
      for (let i = 1; i < curve.length; i++) {
        expect(curve[i].quality).toBeGreaterThan(curve[i - 1].quality);
        // A higher JPEG quality setting keeps more coefficients, so it never spends fewer bits (common practice).
        if (curve === jpeg) expect(curve[i].bpp).toBeGreaterThan(curve[i - 1].bpp);
      }
    }
    // At its highest quality JPEG is closer to the source than at its lowest.
    expect(jpeg[jpeg.length - 1].psnr).toBeGreaterThan(jpeg[0].psnr);
  });

  it("gives the run's codebooks against JPEG, WebP and AVIF on the actual rate, over the interval each pair shares", async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(res.body.bd.method).toBe(DEFAULT_BD_METHOD);
    type Point = { bpp?: number; bppActual?: number; psnr: number | null };
    const rows: { codec: 'jpeg' | 'webp' | 'avif'; bdPsnr: number | null; shared: { bpp: [number, number] | null }; reason: string | null }[] = res.body.bd.againstBaselines;
    expect(rows.map((r) => r.codec)).toEqual(['jpeg', 'webp', 'avif']);
    const vq = (res.body.points as Point[]).map((p) => ({ rate: p.bppActual!, psnr: p.psnr ?? Infinity }));
    for (const row of rows) {
      const codec = (res.body.baselines[row.codec] as Point[]).map((p) => ({ rate: p.bpp!, psnr: p.psnr ?? Infinity }));
      if (codec.length === 0) {
        expect(row.reason).toMatch(/no AVIF points/);
        continue;
      }
      // The same figure as the engine gives for these two curves as the API lists them (codebooks on bpp_actual).
      const expected = bjontegaard(codec, vq);
      expect(row.bdPsnr).toBe(expected.bdPsnr);
      if (row.shared.bpp) {
        expect(row.shared.bpp[0]).toBeCloseTo(Math.max(Math.min(...vq.map((p) => p.rate)), Math.min(...codec.map((p) => p.rate))), 12);
      }
    }
  });

  it('matches an independent JPEG measurement made with sharp', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    const point = (res.body.baselines.jpeg as { quality: number; bpp: number }[]).find((p) => p.quality === 50)!;
    // Encoded size through sharp's own JPEG writer of the same grey images: bits over pixels.
    const images = await t.db.knex('images').where({ set_id: heldOutSetId }).orderBy('id');
    let bytes = 0;
    let pixels = 0;
    for (const image of images) {
      const { data, info } = await sharp(t.composition.contentStore.path(image.sha256)).removeAlpha().raw().toBuffer({ resolveWithObject: true });
      // BT.601 luma, Y' = 0.299 R' + 0.587 G' + 0.114 B' (Rec. ITU-R BT.601), rounded to 8 bits.
      const grey = Buffer.alloc(info.width * info.height);
      for (let i = 0; i < grey.length; i++) grey[i] = Math.min(255, Math.floor(0.299 * data[3 * i] + 0.587 * data[3 * i + 1] + 0.114 * data[3 * i + 2] + 0.5));
      const jpeg = await sharp(grey, { raw: { width: info.width, height: info.height, channels: 1 } }).toColourspace('b-w').jpeg({ quality: 50 }).toBuffer();
      bytes += jpeg.length;
      pixels += info.width * info.height;
    }
    expect(point.bpp).toBeCloseTo((bytes * 8) / pixels, 2);
  });

  it('exports the curve as CSV in the command line\u2019s columns: one row per codebook, then the reference codecs\u2019 points', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve?format=csv`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="?Ripple-sweep-curve\.csv"?$/);
    const lines = res.text.trim().split(/\r\n/);
    expect(lines[0]).toBe(CURVE_CSV_COLUMNS.join(','));
    const json = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    const baselinePoints = Object.values(json.body.baselines as Record<string, unknown[]>).reduce((n, points) => n + points.length, 0);
    expect(baselinePoints).toBeGreaterThan(0);
    expect(lines).toHaveLength(1 + 5 + baselinePoints);
    const column = (name: string) => CURVE_CSV_COLUMNS.indexOf(name as (typeof CURVE_CSV_COLUMNS)[number]);
    lines.slice(1, 6).forEach((line, i) => {
      const cells = line.split(',');
      expect(cells[column('codec')]).toBe('vq');
      expect(Number(cells[column('bits')])).toBe(json.body.points[i].bits);
      expect(Number(cells[column('mse')])).toBe(json.body.points[i].mse);
    });
    expect(lines.slice(6).map((line) => line.split(',')[column('codec')]).every((codec) => ['jpeg', 'webp', 'avif'].includes(codec))).toBe(true);
  });

  it('rejects an unknown export format with 400', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve?format=xlsx`).set(bearer(team.viewer));
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
  });
});

describe('per-image metrics', () => {
  it('lists every codebook on every held-out image, pooling to the overall MSE', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/metrics`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(res.body.codebooks).toHaveLength(5);
    res.body.codebooks.forEach((c: { codebookId: number; images: { mse: number; width: number; height: number; containerBytes: number; bppActual: number }[] }, i: number) => {
      expect(c.images).toHaveLength(3);
      const point = curve.body.points[i];
      expect(c.codebookId).toBe(point.codebookId);
      // Pooled MSE: squared errors summed over all pixels, divided by their number (same-size luma images: the mean).
      const pooled = c.images.reduce((s, m) => s + m.mse * m.width * m.height, 0) / c.images.reduce((s, m) => s + m.width * m.height, 0);
      expect(point.mse).toBeCloseTo(pooled, 10);
      for (const m of c.images) expect(m.bppActual).toBeCloseTo((m.containerBytes * 8) / (m.width * m.height), 12);
    });
  });

  it('exports the per-image metrics as CSV, one row per codebook and image', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/metrics?format=csv`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="?Ripple-sweep-metrics\.csv"?$/);
    const lines = res.text.trim().split(/\r\n/);
    expect(lines[0]).toBe(IMAGE_CSV_COLUMNS.join(','));
    expect(lines).toHaveLength(1 + 5 * 3);
    expect(lines[1]).toContain('held-out tiles-0.png');
  });
});

describe('evaluating a codebook on a held-out list', () => {
  it('does not add baseline rows for a held-out list already measured', async () => {
    const before = await t.db.knex('baseline_points').count({ n: '*' }).first();
    expect(Number(before!.n)).toBeGreaterThan(0);
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    const point = curve.body.points[2];
    const res = await request(t.app)
      .post(`/api/teams/${team.teamId}/codebooks/${point.codebookId}/evaluate`)
      .set(bearer(team.engineer))
      .send({ heldOutSetId });
    expect(res.status).toBe(202);
    expect(res.body.job.heldOutHash).toBe(curve.body.heldOutHash);
    const job = await waitForJob(res.body.job.id);
    expect(job.error).toBeNull();
    expect(job.state).toBe('succeeded');
    const after = await t.db.knex('baseline_points').count({ n: '*' }).first();
    expect(Number(after!.n)).toBe(Number(before!.n));
    // Measured again on the same list, the codebook keeps one evaluation with the same figures.
    const rows = await t.db.knex('evaluations').where({ codebook_id: point.codebookId });
    expect(rows).toHaveLength(1);
    const again = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(again.body.points[2]).toEqual(point);
  });

  it('measures an imported copy of a codebook exactly as the original', async () => {
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    const point = curve.body.points[3];
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${point.codebookId}/export`).set(bearer(team.engineer));
    expect(exported.status).toBe(200);
    const imported = await request(t.app)
      .post(`/api/teams/${team.teamId}/codebooks/import`)
      .set(bearer(team.engineer))
      .set('Content-Type', 'application/json')
      .send(exported.text);
    expect(imported.status).toBe(201);
    const copyId = imported.body.codebook.id as number;
    const heldOut = await t.db.knex('images').where({ set_id: heldOutSetId }).orderBy('id').pluck('id');
    const lastMail = Math.max(0, ...(await mailFor(t.db.knex, team.engineer.user.email)).map((m) => m.id));
    const res = await request(t.app)
      .post(`/api/teams/${team.teamId}/codebooks/${copyId}/evaluate`)
      .set(bearer(team.engineer))
      .send({ heldOutImageIds: [...heldOut].reverse() });
    expect(res.status).toBe(202);
    expect((await waitForJob(res.body.job.id)).state).toBe('succeeded');
    const evaluations = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${copyId}/evaluations`).set(bearer(team.viewer));
    expect(evaluations.status).toBe(200);
    expect(evaluations.body.evaluations).toHaveLength(1);
    const e = evaluations.body.evaluations[0];
    expect(e.heldOutHash).toBe(curve.body.heldOutHash);
    expect(e.images).toHaveLength(3);
    expect(e.mse).toBe(point.mse);
    expect(e.bppActual).toBe(point.bppActual);
    const audit = await t.db.knex('audit_log').where({ action: 'evaluation.requested', target_id: String(copyId) });
    expect(audit).toHaveLength(1);
    // The person who asked is told by e-mail when the evaluation is done.
    const mail = await waitForMail(t.db.knex, team.engineer.user.email, { subject: /^Evaluation Finished/, afterId: lastMail });
    expect(mail.text).toContain(`job #${res.body.job.id}`);
  });

  it('reports an exact reconstruction as lossless with a null PSNR', async () => {
    // One grey codeword, and an image of that grey: every block is coded exactly.
    const codewords = new Float32Array([128, 128, 128, 128]);
    const le = Buffer.alloc(codewords.length * 4);
    codewords.forEach((v, i) => le.writeFloatLE(v, 4 * i));
    const document = {
      format: 'cellwright-codebook',
      version: 1,
      bits: 0,
      size: 1,
      dimension: 4,
      patch: { width: 2, height: 2, channels: 1, color: 'luma' },
      preprocessing: { kind: 'none' },
      codewords: [[128, 128, 128, 128]],
      usage: [1],
      training: { source: 'by hand', vectorCount: 1, init: 'random', epsilon: 0.001, seed: 0, iterations: 0, distortion: 0, trace: [] },
      // The format's checksum: SHA-256 of the codewords as float32 little-endian bytes (FORMAT.md), computed with node:crypto.
      checksum: createHash('sha256').update(le).digest('hex'),
    };
    const imported = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.engineer)).send(document);
    expect(imported.status).toBe(201);
    const grey = await sharp({ create: { width: 16, height: 16, channels: 3, background: { r: 128, g: 128, b: 128 } } }).png().toBuffer();
    const flatSet = await setWith(team.engineer, 'flat grey', [grey]);
    const res = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/${imported.body.codebook.id}/evaluate`).set(bearer(team.engineer)).send({ heldOutSetId: flatSet });
    expect(res.status).toBe(202);
    expect((await waitForJob(res.body.job.id)).state).toBe('succeeded');
    const evaluations = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${imported.body.codebook.id}/evaluations`).set(bearer(team.viewer));
    const e = evaluations.body.evaluations[0];
    expect(e).toMatchObject({ mse: 0, psnr: null, lossless: true, ssim: 1 });
    expect(e.images[0]).toMatchObject({ mse: 0, psnr: null, lossless: true });
    const [imageId] = await t.db.knex('images').where({ set_id: flatSet }).pluck('id');
    const info = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${imported.body.codebook.id}/reconstruction/${imageId}?view=info`).set(bearer(team.viewer));
    expect(info.body).toMatchObject({ mse: 0, psnr: null, lossless: true });
  });

  it('refuses a body naming both an image list and a set, and writes no job', async () => {
    const before = await t.db.knex('jobs').count({ n: '*' }).first();
    const codebook = await t.db.knex('codebooks').where({ run_id: runId }).first();
    const res = await request(t.app)
      .post(`/api/teams/${team.teamId}/codebooks/${codebook.id}/evaluate`)
      .set(bearer(team.engineer))
      .send({ heldOutSetId, heldOutImageIds: [1] });
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
    expect((await t.db.knex('jobs').count({ n: '*' }).first())!.n).toBe(before!.n);
  });

  it('answers 404 for an image of another team, and writes no job', async () => {
    const otherSet = await setWith(outsider, 'theirs', await pngsOf(23, 1));
    const [theirImage] = await t.db.knex('images').where({ set_id: otherSet }).pluck('id');
    const before = await t.db.knex('jobs').count({ n: '*' }).first();
    const codebook = await t.db.knex('codebooks').where({ run_id: runId }).first();
    const res = await request(t.app)
      .post(`/api/teams/${team.teamId}/codebooks/${codebook.id}/evaluate`)
      .set(bearer(team.engineer))
      .send({ heldOutImageIds: [theirImage] });
    expect(res.status).toBe(404);
    expect((await t.db.knex('jobs').count({ n: '*' }).first())!.n).toBe(before!.n);
  });

  it('refuses a viewer with 403', async () => {
    const codebook = await t.db.knex('codebooks').where({ run_id: runId }).first();
    const res = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/${codebook.id}/evaluate`).set(bearer(team.viewer)).send({ heldOutSetId });
    expect(res.status).toBe(403);
  });
});

describe('another team', () => {
  it('gets 404 on the curve, the metrics, evaluating and the evaluations', async () => {
    const codebook = await t.db.knex('codebooks').where({ run_id: runId }).first();
    const base = `/api/teams/${team.teamId}`;
    for (const path of [`${base}/runs/${runId}/curve`, `${base}/runs/${runId}/metrics?format=csv`, `${base}/codebooks/${codebook.id}/evaluations`]) {
      const res = await request(t.app).get(path).set(bearer(outsider));
      expect(res.status).toBe(404);
      expect(res.body.error.code).toBe('not_found');
    }
    const own = `/api/teams/${outsider.teamId}`;
    expect((await request(t.app).get(`${own}/runs/${runId}/curve`).set(bearer(outsider))).status).toBe(404);
    expect((await request(t.app).post(`${own}/codebooks/${codebook.id}/evaluate`).set(bearer(outsider)).send({ heldOutSetId })).status).toBe(404);
  });
});
