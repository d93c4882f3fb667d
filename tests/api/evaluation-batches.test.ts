import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { EvaluationBatch, JobProgress } from '../../server/contracts';
import { MATRIX_CSV_COLUMNS, readCsv } from '../../server/engine';
import type { JobEvent } from '../../server/jobs/events';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { createSetWith, seabedPngs, waitForRun } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let codebookIds: number[];
let setA: number;
let setB: number;
const events: JobEvent[] = [];

const url = (suffix = '') => `/api/teams/${team.teamId}/evaluation-batches${suffix}`;
const terminal = (state: string) => ['succeeded', 'failed', 'cancelled'].includes(state);

async function batch(jobId: number, s: Session = team.viewer): Promise<EvaluationBatch> {
  const res = await request(t.app).get(url(`/${jobId}`)).set(bearer(s));
  expect(res.status).toBe(200);
  return res.body.batch;
}

async function waitFor(jobId: number, done: (b: EvaluationBatch) => boolean = (b) => terminal(b.job.state)): Promise<EvaluationBatch> {
  for (;;) {
    const b = await batch(jobId);
    if (done(b) || terminal(b.job.state)) return b;
    await new Promise((r) => setTimeout(r, 100));
  }
}

beforeAll(async () => {
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  t.composition.jobs.bus.subscribeAll((e) => events.push(e));
  team = await teamWithRoles(t, 'Batch Team');
  outsider = await signUp(t.app, { teamName: 'Batch Outsiders' });
  const training = await createSetWith(t.app, team.engineer, 'batch training', await seabedPngs(31, 3, 48, 40));
  setA = await createSetWith(t.app, team.engineer, 'harbour held-out', await seabedPngs(32, 2, 40, 32));
  setB = await createSetWith(t.app, team.engineer, 'reef held-out', await seabedPngs(33, 3, 36, 28));
  const created = await request(t.app)
    .post(`/api/teams/${team.teamId}/runs`)
    .set(bearer(team.engineer))
    .send({ name: 'Batch source', trainingSetId: training, heldOutSetId: setA, patch: { width: 4, height: 4 }, color: 'luma', meanBits: 0, bits: { from: 1, to: 3 }, init: 'split', seed: 4 });
  expect(created.status).toBe(201);
  const run = await waitForRun(t.app, team.engineer, created.body.run.id);
  expect(run.state).toBe('succeeded');
  const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
  codebookIds = (list.body.codebooks as { id: number; size: number }[]).sort((a, b) => a.size - b.size).map((c) => c.id);
  expect(codebookIds).toHaveLength(3);
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('a batch of codebooks on image sets', () => {
  let done: EvaluationBatch;

  beforeAll(async () => {
    const res = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds, imageSetIds: [setA, setB] });
    expect(res.status).toBe(202);
    expect(['queued', 'running']).toContain(res.body.batch.job.state);
    expect(res.body.batch.cells.filter((c: { result: unknown }) => c.result !== null).length).toBeLessThan(6);
    done = await waitFor(res.body.batch.job.id);
  });

  it('ends succeeded with every codebook measured on every set, names and image counts given', () => {
    expect(done.job.state).toBe('succeeded');
    expect(done.job.error).toBeNull();
    expect(done.sets.map((s) => [s.name, s.imageCount])).toEqual([['harbour held-out', 2], ['reef held-out', 3]]);
    expect(done.codebooks.map((c) => c.size)).toEqual([2, 4, 8]);
    expect(done.cells).toHaveLength(6);
    for (const cell of done.cells) {
      expect(cell.result).not.toBeNull();
      // PSNR = 10·log10(255² / MSE) for 8-bit data (common practice).
      expect(cell.result!.psnr).toBeCloseTo(10 * Math.log10((255 * 255) / cell.result!.mse), 10);
      // b index bits per 16-pixel block: b/16 bpp (common practice).
      const c = done.codebooks.find((x) => x.id === cell.codebookId)!;
      expect(cell.result!.bppFixed).toBe(c.bits! / 16);
    }
    // More codewords never measure worse on the same set (a split pass refines the smaller codebook's cells).
    for (const setIndex of [0, 1]) {
      const mse = done.cells.filter((c) => c.setIndex === setIndex).map((c) => c.result!.mse);
      expect(mse[1]).toBeLessThan(mse[0]);
      expect(mse[2]).toBeLessThan(mse[1]);
    }
  });

  it('gives the same figures as the codebook\u2019s own evaluations on that set', async () => {
    const cell = done.cells.find((c) => c.setIndex === 1 && c.codebookId === codebookIds[2])!;
    const own = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookIds[2]}/evaluations`).set(bearer(team.viewer));
    const e = (own.body.evaluations as { heldOutHash: string; mse: number; ssim: number }[]).find((x) => x.heldOutHash === done.sets[1].heldOutHash)!;
    expect(cell.result!.mse).toBe(e.mse);
    expect(cell.result!.ssim).toBe(e.ssim);
  });

  it('reported progress as events, rising to the end, naming each set in turn', () => {
    const progress = events.filter((e): e is Extract<JobEvent, { type: 'progress' }> => e.type === 'progress' && e.jobId === done.job.id).map((e) => e.progress as JobProgress);
    expect(progress.length).toBeGreaterThan(2);
    const fractions = progress.map((p) => p.fraction);
    for (let i = 1; i < fractions.length; i++) expect(fractions[i]).toBeGreaterThanOrEqual(fractions[i - 1]);
    expect(fractions.at(-1)).toBe(1);
    expect(progress.some((p) => p.message?.startsWith('harbour held-out (1 of 2)'))).toBe(true);
    expect(progress.some((p) => p.message?.startsWith('reef held-out (2 of 2)'))).toBe(true);
  });

  it('exports the matrix as CSV, one row per codebook and set with the JSON\u2019s figures', async () => {
    const res = await request(t.app).get(url(`/${done.job.id}/matrix?format=csv`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toMatch(new RegExp(`attachment; filename="?evaluation-${done.job.id}-matrix\\.csv"?`));
    const [header, ...rows] = readCsv(res.text);
    expect(header).toEqual([...MATRIX_CSV_COLUMNS]);
    expect(rows).toHaveLength(6);
    const col = (name: (typeof MATRIX_CSV_COLUMNS)[number]) => header.indexOf(name);
    done.cells.forEach((cell, i) => {
      expect(Number(rows[i][col('codebook')])).toBe(cell.codebookId);
      expect(rows[i][col('set_name')]).toBe(done.sets[cell.setIndex].name);
      expect(Number(rows[i][col('image_set')])).toBe(done.sets[cell.setIndex].setId);
      expect(Number(rows[i][col('psnr_db')])).toBe(cell.result!.psnr);
      expect(Number(rows[i][col('bpp_actual')])).toBe(cell.result!.bppActual);
    });
  });

  it('lists the batch among the team\u2019s evaluations', async () => {
    const res = await request(t.app).get(url()).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.body.batches[0]).toMatchObject({ job: { id: done.job.id, state: 'succeeded' }, codebookCount: 3, setCount: 2, setNames: ['harbour held-out', 'reef held-out'] });
  });
});

describe('one codebook evaluated on its own', () => {
  it('is a batch of one: the status route shows it to the end', async () => {
    const res = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/${codebookIds[0]}/evaluate`).set(bearer(team.engineer)).send({ heldOutSetId: setB });
    expect(res.status).toBe(202);
    const b = await waitFor(res.body.job.id);
    expect(b.job.state).toBe('succeeded');
    expect(b.sets).toEqual([{ setId: setB, name: 'reef held-out', imageCount: 3, heldOutHash: res.body.job.heldOutHash }]);
    expect(b.cells[0].result).not.toBeNull();
  });

  it('names a list of chosen images after the one set they come from', async () => {
    const images = await request(t.app).get(`/api/teams/${team.teamId}/image-sets/${setB}/images`).set(bearer(team.viewer));
    const ids = (images.body.images as { id: number }[]).slice(0, 2).map((i) => i.id);
    const res = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/${codebookIds[1]}/evaluate`).set(bearer(team.engineer)).send({ heldOutImageIds: ids });
    expect(res.status).toBe(202);
    const b = await batch(res.body.job.id);
    expect(b.sets).toEqual([{ setId: null, name: 'reef held-out (2 chosen images)', imageCount: 2, heldOutHash: res.body.job.heldOutHash }]);
  });
});

describe('cancelling and failing', () => {
  it('cancels a running batch and a queued one, keeps nothing of either, and shows a failed one\u2019s reason', async () => {
    // Large images the set has never been measured on: the reference codecs alone keep the job busy for a while.
    const slowSet = await createSetWith(t.app, team.engineer, 'wide survey', await seabedPngs(34, 6, 320, 240));
    const smallSet = await createSetWith(t.app, team.engineer, 'doomed held-out', await seabedPngs(35, 2, 32, 24));
    // One job at a time in tests (JOB_CONCURRENCY=1), taken in the order queued: the first runs, the others wait.
    const running = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds, imageSetIds: [slowSet] });
    expect(running.status).toBe(202);
    const runningId = running.body.batch.job.id as number;
    const queued = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds: [codebookIds[0]], imageSetIds: [setA] });
    const doomed = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds: [codebookIds[1]], imageSetIds: [smallSet] });
    const doomedId = doomed.body.batch.job.id as number;
    const cancelQueued = await request(t.app).post(url(`/${queued.body.batch.job.id}/cancel`)).set(bearer(team.engineer));
    expect(cancelQueued.status).toBe(200);
    expect(cancelQueued.body.batch.job.state).toBe('cancelled');
    // An image removed after queueing: the job must fail with the reason, not measure a different list.
    const images = await request(t.app).get(`/api/teams/${team.teamId}/image-sets/${smallSet}/images`).set(bearer(team.viewer));
    expect((await request(t.app).delete(`/api/teams/${team.teamId}/images/${images.body.images[0].id}`).set(bearer(team.admin))).status).toBe(204);

    await waitFor(runningId, (b) => b.job.state === 'running');
    const cancel = await request(t.app).post(url(`/${runningId}/cancel`)).set(bearer(team.engineer));
    expect(cancel.status).toBe(200);
    expect(cancel.body.batch.job.cancelRequested).toBe(true);
    const cancelled = await waitFor(runningId);
    expect(cancelled.job.state).toBe('cancelled');
    expect(cancelled.cells.every((c) => c.result === null)).toBe(true);
    expect(await t.db.knex('evaluations').where({ held_out_hash: cancelled.sets[0].heldOutHash }).count({ n: '*' }).first()).toEqual({ n: 0 });

    const failed = await waitFor(doomedId);
    expect(failed.job.state).toBe('failed');
    expect(failed.job.error).toMatch(/some images of doomed held-out were deleted since the evaluation was queued/);

    const again = await request(t.app).post(url(`/${runningId}/cancel`)).set(bearer(team.engineer));
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('conflict');
    const audit = await t.db.knex('audit_log').where({ action: 'evaluation.cancelled', target_id: String(runningId) });
    expect(audit).toHaveLength(1);
  });
});

describe('refusals', () => {
  it('refuses a viewer with 403 on queueing and cancelling, and writes no job', async () => {
    const before = await t.db.knex('jobs').count({ n: '*' }).first();
    const res = await request(t.app).post(url()).set(bearer(team.viewer)).send({ codebookIds, imageSetIds: [setA] });
    expect(res.status).toBe(403);
    expect(await t.db.knex('jobs').count({ n: '*' }).first()).toEqual(before);
  });

  it('answers 404 for a codebook or set of another team, and writes no job', async () => {
    const theirs = await createSetWith(t.app, outsider, 'their set', await seabedPngs(36, 1, 32, 24));
    const before = await t.db.knex('jobs').count({ n: '*' }).first();
    const set = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds, imageSetIds: [setA, theirs] });
    expect(set.status).toBe(404);
    expect(set.body.error.message).toBe(`Image set ${theirs} not found`);
    const book = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds: [codebookIds[0], 999999], imageSetIds: [setA] });
    expect(book.status).toBe(404);
    expect(book.body.error.message).toBe('Codebook 999999 not found');
    expect(await t.db.knex('jobs').count({ n: '*' }).first()).toEqual(before);
  });

  it('refuses a set without images with 400 naming it, and writes no job', async () => {
    const empty = await request(t.app).post(`/api/teams/${team.teamId}/image-sets`).set(bearer(team.engineer)).send({ name: 'empty held-out' });
    const before = await t.db.knex('jobs').count({ n: '*' }).first();
    const res = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds, imageSetIds: [setA, empty.body.imageSet.id] });
    expect(res.status).toBe(400);
    expect(res.body.error.message).toBe('The image set “empty held-out” has no images');
    expect(await t.db.knex('jobs').count({ n: '*' }).first()).toEqual(before);
  });

  it('refuses a codebook named twice with 400', async () => {
    const res = await request(t.app).post(url()).set(bearer(team.engineer)).send({ codebookIds: [codebookIds[0], codebookIds[0]], imageSetIds: [setA] });
    expect(res.status).toBe(400);
    expect(JSON.stringify(res.body.error)).toMatch(/each codebook once/);
  });

  it('hides a batch from another team (404 on status, matrix and cancel) and a run\u2019s own evaluation from the batch routes', async () => {
    const list = await request(t.app).get(url()).set(bearer(team.viewer));
    const id = list.body.batches[0].job.id as number;
    const other = (suffix: string) => `/api/teams/${outsider.teamId}/evaluation-batches/${id}${suffix}`;
    expect((await request(t.app).get(other('')).set(bearer(outsider))).status).toBe(404);
    expect((await request(t.app).get(`/api/teams/${team.teamId}/evaluation-batches/${id}`).set(bearer(outsider))).status).toBe(404);
    expect((await request(t.app).get(other('/matrix?format=csv')).set(bearer(outsider))).status).toBe(404);
    expect((await request(t.app).post(other('/cancel')).set(bearer(outsider))).status).toBe(404);
    const runJob = await t.db.knex('jobs').whereNotNull('run_id').where({ kind: 'evaluate' }).first();
    expect((await request(t.app).get(url(`/${runJob.id}`)).set(bearer(team.viewer))).status).toBe(404);
  });
});
