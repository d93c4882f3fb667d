import { createHash } from 'node:crypto';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { bearer, createTestApp, signUp, teamWithRoles, uniqueEmail, type Session, type TestApp } from '../helpers/api';
import { waitForMail } from '../helpers/mailbox';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let other: Session;
let setId: number;
let bigSetId: number;
let otherImageId: number;

async function uploadSet(session: Session, name: string, tiles: { width: number; height: number; rgb: Uint8Array }[], heldOutFraction: number) {
  const created = await request(t.app).post(`/api/teams/${session.teamId}/image-sets`).set(bearer(session)).send({ name });
  expect(created.status).toBe(201);
  const id = created.body.imageSet.id as number;
  let req = request(t.app).post(`/api/teams/${session.teamId}/image-sets/${id}/images`).set(bearer(session));
  for (const [i, tile] of tiles.entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    req = req.attach('files', png, `tile-${i}.png`);
  }
  const uploaded = await req;
  expect(uploaded.status).toBe(201);
  const split = await request(t.app).post(`/api/teams/${session.teamId}/image-sets/${id}/split`).set(bearer(session)).send({ heldOutFraction, seed: 5 });
  expect(split.status).toBe(200);
  return { id, imageIds: (uploaded.body.images as { id: number }[]).map((i) => i.id) };
}

const runsUrl = (teamId = team.teamId) => `/api/teams/${teamId}/runs`;

interface RunView {
  state: string;
  error: string | null;
  jobs: { kind: string; state: string; progress: { phase: string } | null }[];
}

async function waitForRun(runId: number, done: (run: RunView) => boolean): Promise<RunView> {
  for (let i = 0; i < 1200; i += 1) {
    const res = await request(t.app).get(`${runsUrl()}/${runId}`).set(bearer(team.engineer));
    expect(res.status).toBe(200);
    if (done(res.body.run)) return res.body.run;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`run ${runId} never reached the awaited state`);
}
const terminal = (run: { state: string }) => ['succeeded', 'failed', 'cancelled'].includes(run.state);

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Runs Team');
  other = await signUp(t.app, { teamName: 'Other Team', email: uniqueEmail('other') });
  ({ id: setId } = await uploadSet(team.engineer, 'Seabed small', seabedSet(11, 6, 64, 48), 0.34));
  ({ id: bigSetId } = await uploadSet(team.engineer, 'Seabed large', seabedSet(12, 10, 128, 96), 0.2));
  const foreign = await uploadSet(other, 'Foreign', seabedSet(13, 2, 32, 32), 0.5);
  otherImageId = foreign.imageIds[0];
  await t.composition.jobs.runner.start();
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('a training run', () => {
  const body = {
    name: 'Sweep 4x4 luma',
    notes: 'split from one codeword',
    trainingSetId: 0,
    heldOutSetId: 0,
    patch: { width: 4, height: 4 },
    color: 'luma',
    meanBits: 0,
    bits: { from: 1, to: 6 },
    init: 'split',
    epsilon: 0.0001,
    maxIterations: 40,
    maxVectors: 100000,
    seed: 7,
  };
  let runId: number;
  let finished: {
    state: string;
    error: string | null;
    config: unknown;
    normalized: { trainingImageIds: number[] };
    jobs: { kind: string; state: string; attempts: number }[];
    codebooks: { id: number; bits: number; size: number; distortion: number; checksum: string }[];
  };

  it('is created queued with the body stored exactly as submitted', async () => {
    const submitted = { ...body, trainingSetId: setId, heldOutSetId: setId };
    const res = await request(t.app).post(runsUrl()).set(bearer(team.engineer)).send(submitted);
    expect(res.status).toBe(201);
    runId = res.body.run.id;
    expect(['queued', 'running']).toContain(res.body.run.state);
    expect(res.body.run.config).toEqual(submitted);
    expect(res.body.run.normalized.sizes).toEqual([2, 4, 8, 16, 32, 64]);
    expect(res.body.run.jobs.map((j: { kind: string }) => j.kind)).toEqual(['train']);
    const audit = await t.db.knex('audit_log').where({ action: 'run.created', target_id: String(runId) });
    expect(audit).toHaveLength(1);
  });

  it('goes from queued through running to succeeded and keeps one codebook per size', async () => {
    finished = (await waitForRun(runId, terminal)) as unknown as typeof finished;
    expect({ state: finished.state, error: finished.error }).toEqual({ state: 'succeeded', error: null });
    expect(finished.jobs.map((j) => [j.kind, j.state])).toEqual([
      ['train', 'succeeded'],
      ['evaluate', 'succeeded'],
    ]);
    expect(finished.codebooks.map((c) => c.size)).toEqual([2, 4, 8, 16, 32, 64]);
    expect(finished.codebooks.map((c) => c.bits)).toEqual([1, 2, 3, 4, 5, 6]);
  });

  it('lowers the training distortion with every doubling of the codebook', () => {
    const d = finished.codebooks.map((c) => c.distortion);
    for (let i = 1; i < d.length; i += 1) expect(d[i]).toBeLessThan(d[i - 1]);
  });

  it('reports a distortion that an independent nearest-codeword search over BT.601 luma blocks reproduces', async () => {
    // Recompute from the stored originals: ITU-R BT.601 luma (0.299 R + 0.587 G + 0.114 B), 4×4 blocks in raster
    // order, exhaustive nearest codeword in float64 — nothing of the engine is used.
    const images = await t.db.knex('images').whereIn('id', finished.normalized.trainingImageIds).select('sha256');
    const blocks: number[][] = [];
    for (const { sha256 } of images) {
      const { data, info } = await sharp(await t.composition.contentStore.read(sha256)).removeAlpha().raw().toBuffer({ resolveWithObject: true });
      for (let by = 0; by + 4 <= info.height; by += 4) {
        for (let bx = 0; bx + 4 <= info.width; bx += 4) {
          const v: number[] = [];
          for (let y = 0; y < 4; y += 1) {
            for (let x = 0; x < 4; x += 1) {
              const p = ((by + y) * info.width + bx + x) * 3;
              v.push(0.299 * data[p] + 0.587 * data[p + 1] + 0.114 * data[p + 2]);
            }
          }
          blocks.push(v);
        }
      }
    }
    for (const summary of finished.codebooks.filter((c) => c.size === 8 || c.size === 64)) {
      const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${summary.id}`).set(bearer(team.viewer));
      expect(res.status).toBe(200);
      const codewords = res.body.codebook.codewords as number[][];
      let total = 0;
      const counts = new Array<number>(codewords.length).fill(0);
      for (const v of blocks) {
        let best = Infinity;
        let arg = 0;
        codewords.forEach((c, k) => {
          let s = 0;
          for (let i = 0; i < 16; i += 1) s += (v[i] - c[i]) ** 2;
          if (s < best) [best, arg] = [s, k];
        });
        total += best;
        counts[arg] += 1;
      }
      expect(res.body.codebook.distortion).toBeCloseTo(total / (blocks.length * 16), 3);
      expect(res.body.codebook.usage).toEqual(counts);
      expect(res.body.codebook.cellDistortion).toHaveLength(summary.size);
      expect(res.body.codebook.trace.length).toBeGreaterThan(0);
    }
  });

  it("mails the creator when its jobs finish, as the team's own mail in its Outbox", async () => {
    const mail = await waitForMail(t.db.knex, team.engineer.user.email, { subject: /Training Finished: Sweep 4x4 luma/ });
    expect(mail.text).toContain(`/teams/${team.teamId}/runs/${runId}`);
    await t.composition.services.accounts.settle();
    const outbox = await request(t.app).get(`/api/teams/${team.teamId}/outbox`).set(bearer(team.admin));
    const notice = (outbox.body.messages as { kind: string; to: string; subject: string; status: string }[]).find(
      (m) => m.kind === 'job_finished' && m.subject.startsWith('Training Finished'),
    );
    expect(notice).toMatchObject({ to: team.engineer.user.email, subject: expect.stringMatching(/Training Finished: Sweep 4x4 luma/), status: 'sent' });
  });

  it('lists the run with its creator and best operating point', async () => {
    const res = await request(t.app).get(runsUrl()).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const listed = (res.body.runs as { id: number; state: string; createdBy: { name: string }; bestOperatingPoint: { bits: number } | null }[]).find((r) => r.id === runId)!;
    expect(listed.state).toBe('succeeded');
    expect(listed.createdBy.name).toBe('The engineer');
    expect(listed.bestOperatingPoint?.bits).toBe(6);
  });

  it('exports a codebook whose checksum is the SHA-256 of its float32 little-endian codewords', async () => {
    const id = finished.codebooks[2].id;
    const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${id}/export`).set(bearer(team.engineer)).buffer(true).parse((r, cb) => {
      let text = '';
      r.on('data', (c: Buffer) => (text += c.toString('utf8')));
      r.on('end', () => cb(null, text));
    });
    expect(res.status).toBe(200);
    expect(res.headers['content-disposition']).toBe('attachment; filename="Sweep-4x4-luma-b3.cellwright.json"');
    const doc = JSON.parse(res.body as string);
    expect(doc.format).toBe('cellwright-codebook');
    // FIPS 180-4 SHA-256 (node:crypto) over the codewords as IEEE 754 binary32, little-endian, row-major.
    const bytes = Buffer.alloc(doc.size * doc.dimension * 4);
    (doc.codewords as number[][]).flat().forEach((v, i) => bytes.writeFloatLE(v, i * 4));
    expect(doc.checksum).toBe(createHash('sha256').update(bytes).digest('hex'));
    expect(doc.checksum).toBe(finished.codebooks[2].checksum);
    const audit = await t.db.knex('audit_log').where({ action: 'codebook.exported', target_id: String(id) });
    expect(audit).toHaveLength(1);

    const imported = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import?name=Round%20trip`).set(bearer(team.engineer)).send(doc);
    expect(imported.status).toBe(201);
    expect(imported.body.codebook.source).toBe('imported');
    expect(imported.body.codebook.origin).toBe('imported');
    expect(imported.body.codebook.name).toBe('Round trip');
    expect(imported.body.codebook.checksum).toBe(doc.checksum);
    expect(imported.body.codebook.codewords).toEqual(doc.codewords);
    const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    expect(list.body.codebooks.map((c: { id: number }) => c.id)).toContain(imported.body.codebook.id);

    const tampered = structuredClone(doc);
    tampered.codewords[0][0] += 1;
    const refused = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.engineer)).send(tampered);
    expect(refused.status).toBe(400);
    expect(refused.body.error.code).toBe('validation_failed');
    expect(refused.body.error.details[0].path).toBe('checksum');

    const { usage: _dropped, ...missing } = doc;
    const incomplete = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.engineer)).send(missing);
    expect(incomplete.status).toBe(400);
    expect(incomplete.body.error.details[0].path).toBe('usage');
    expect(await t.db.knex('codebooks').where({ source: 'imported' }).count({ n: '*' })).toEqual([{ n: 1 }]);
  });

  it('refuses to cancel a finished run with 409', async () => {
    const res = await request(t.app).post(`${runsUrl()}/${runId}/cancel`).set(bearer(team.engineer));
    expect(res.status).toBe(409);
    expect(res.body.error.code).toBe('conflict');
  });
});

describe('cancelling', () => {
  const heavy = () => ({
    name: `Heavy ${Math.random().toString(36).slice(2, 8)}`,
    trainingSetId: bigSetId,
    heldOutSetId: bigSetId,
    patch: { width: 4, height: 4 },
    bits: { from: 0, to: 10 },
    epsilon: 0.000001,
    maxIterations: 1000,
  });

  it('ends a running job cancelled, leaves no codebooks and cancels a queued run at once', async () => {
    const first = await request(t.app).post(runsUrl()).set(bearer(team.engineer)).send(heavy());
    expect(first.status).toBe(201);
    const runId = first.body.run.id as number;
    await waitForRun(runId, (r) => r.jobs[0].state === 'running' && r.jobs[0].progress?.phase === 'training');

    // One job at a time (JOB_CONCURRENCY=1): a second run waits in the queue.
    const second = await request(t.app).post(runsUrl()).set(bearer(team.engineer)).send(heavy());
    expect(second.body.run.state).toBe('queued');
    const cancelledQueued = await request(t.app).post(`${runsUrl()}/${second.body.run.id}/cancel`).set(bearer(team.admin));
    expect(cancelledQueued.status).toBe(200);
    expect(cancelledQueued.body.run.state).toBe('cancelled');

    const cancel = await request(t.app).post(`${runsUrl()}/${runId}/cancel`).set(bearer(team.engineer));
    expect(cancel.status).toBe(200);
    expect(cancel.body.run.jobs[0].cancelRequested).toBe(true);
    const run = await waitForRun(runId, terminal);
    expect(run.state).toBe('cancelled');
    expect(run.jobs.map((j) => j.state)).toEqual(['cancelled']);
    expect(await t.db.knex('codebooks').where({ run_id: runId }).count({ n: '*' })).toEqual([{ n: 0 }]);
    expect(await t.db.knex('jobs').where({ run_id: runId, kind: 'evaluate' }).count({ n: '*' })).toEqual([{ n: 0 }]);
    const audit = await t.db.knex('audit_log').where({ action: 'run.cancelled', target_id: String(runId) });
    expect(audit).toHaveLength(1);
    expect(t.composition.jobs.runner.running()).toEqual([]);
  });
});

describe('a run that cannot train', () => {
  it('fails with the reason, writes no codebooks and mails the creator', async () => {
    // Flat images: every 4×4 block of one image is the same vector, so two images give two distinct vectors.
    const flat = [40, 120, 200].map((v) => ({ width: 32, height: 32, rgb: new Uint8Array(32 * 32 * 3).fill(v) }));
    const { id } = await uploadSet(team.engineer, 'Flat', flat, 0.34);
    const res = await request(t.app)
      .post(runsUrl())
      .set(bearer(team.engineer))
      .send({ name: 'Flat sweep', trainingSetId: id, heldOutSetId: id, patch: { width: 4, height: 4 }, bits: 2 });
    expect(res.status).toBe(201);
    const run = await waitForRun(res.body.run.id, terminal);
    expect(run.state).toBe('failed');
    expect(run.error).toMatch(/only 2 distinct vectors, fewer than 4 codewords/);
    expect(await t.db.knex('codebooks').where({ run_id: res.body.run.id }).count({ n: '*' })).toEqual([{ n: 0 }]);
    const mail = await waitForMail(t.db.knex, team.engineer.user.email, { subject: /Training Failed: Flat sweep/ });
    expect(mail.text).toMatch(/Reason: .*distinct vectors/);
  });
});

describe('run validation', () => {
  const valid = () => ({ name: 'Checked', trainingSetId: setId, heldOutSetId: setId, patch: { width: 4, height: 4 }, bits: 3 });
  const post = (body: unknown) => request(t.app).post(runsUrl()).set(bearer(team.engineer)).send(body as object);
  const paths = (res: request.Response) => (res.body.error.details as { path: string }[]).map((d) => d.path);

  it('refuses a bit range that runs backwards', async () => {
    const res = await post({ ...valid(), bits: { from: 5, to: 3 } });
    expect(res.status).toBe(400);
    expect(paths(res)).toContain('bits.from');
  });

  it('refuses out-of-range settings, naming each field', async () => {
    const res = await post({ ...valid(), patch: { width: 1, height: 17 }, epsilon: 0, maxIterations: 0, maxVectors: 50, bits: 15 });
    expect(res.status).toBe(400);
    expect(paths(res)).toEqual(expect.arrayContaining(['patch.width', 'patch.height', 'epsilon', 'maxIterations', 'maxVectors', 'bits']));
  });

  it('refuses both an image list and a set for the same side', async () => {
    const res = await post({ ...valid(), trainingImageIds: [1] });
    expect(res.status).toBe(400);
    expect(paths(res)).toContain('trainingImageIds');
  });

  it('refuses an image of another team as if it did not exist', async () => {
    const { heldOutSetId: _h, ...rest } = valid();
    const res = await post({ ...rest, heldOutImageIds: [otherImageId] });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0]).toMatchObject({ path: 'heldOutImageIds', message: `no image ${otherImageId} in this team` });
  });

  it('refuses an image that is both trained on and held out', async () => {
    const [img] = await t.db.knex('images').where({ set_id: setId, role: 'training' }).select('id');
    const res = await post({ name: 'Overlap', trainingImageIds: [img.id], heldOutImageIds: [img.id], patch: { width: 4, height: 4 }, bits: 1 });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0].message).toMatch(/also a training image/);
  });

  it('refuses a codebook larger than the training vectors can fill', async () => {
    const res = await post({ ...valid(), bits: 12 });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0].path).toBe('bits');
    expect(await t.db.knex('runs').where({ name: 'Checked' }).count({ n: '*' })).toEqual([{ n: 0 }]);
  });
});

describe('roles on runs and codebooks', () => {
  let runId: number;
  let codebookId: number;
  beforeAll(async () => {
    const run = await t.db.knex('runs').where({ team_id: team.teamId, state: 'succeeded' }).first('id');
    runId = run.id;
    codebookId = (await t.db.knex('codebooks').where({ run_id: runId }).first('id')).id;
  });

  it('rejects a request without a session with 401', async () => {
    for (const res of await Promise.all([request(t.app).get(runsUrl()), request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookId}`)])) {
      expect(res.status).toBe(401);
      expect(res.body.error.code).toBe('unauthenticated');
    }
  });

  it('lets a viewer read runs and codebooks, and export what they read', async () => {
    const codebookUrl = `/api/teams/${team.teamId}/codebooks/${codebookId}`;
    for (const url of [runsUrl(), `${runsUrl()}/${runId}`, `/api/teams/${team.teamId}/codebooks`, codebookUrl, `${codebookUrl}/export`]) {
      const res = await request(t.app).get(url).set(bearer(team.viewer));
      expect(res.status, url).toBe(200);
    }
  });

  it('rejects a viewer with 403 on creating, cancelling and importing', async () => {
    const attempts = [
      request(t.app).post(runsUrl()).set(bearer(team.viewer)).send({ name: 'x', trainingSetId: setId, heldOutSetId: setId, patch: { width: 4, height: 4 }, bits: 1 }),
      request(t.app).post(`${runsUrl()}/${runId}/cancel`).set(bearer(team.viewer)),
      request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.viewer)).send({}),
    ];
    for (const res of await Promise.all(attempts)) {
      expect(res.status).toBe(403);
      expect(res.body.error.code).toBe('forbidden');
    }
  });

  it("answers 404 to another team's member for the run, its events, its codebook and the export", async () => {
    const urls = [
      `${runsUrl()}/${runId}`,
      `${runsUrl()}/${runId}/events`,
      `/api/teams/${team.teamId}/codebooks/${codebookId}`,
      `/api/teams/${team.teamId}/codebooks/${codebookId}/export`,
    ];
    for (const url of urls) {
      const res = await request(t.app).get(url).set(bearer(other));
      expect(res.status, url).toBe(404);
    }
    // Their own team's URLs with our ids: the objects are not theirs either.
    for (const url of [`${runsUrl(other.teamId)}/${runId}`, `/api/teams/${other.teamId}/codebooks/${codebookId}`, `/api/teams/${other.teamId}/codebooks/${codebookId}/export`]) {
      const res = await request(t.app).get(url).set(bearer(other));
      expect(res.status, url).toBe(404);
    }
    const cancel = await request(t.app).post(`${runsUrl(other.teamId)}/${runId}/cancel`).set(bearer(other));
    expect(cancel.status).toBe(404);
  });
});
