import { existsSync } from 'node:fs';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { createStoreSweeper } from '../../server/services/store-sweep';
import { bearer, createTestApp, signUp, teamWithRoles, uniqueEmail, type Session, type TestApp } from '../helpers/api';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let other: Session;
let setId: number;

const hour = 60 * 60_000;
const runsUrl = (teamId = team.teamId) => `/api/teams/${teamId}/runs`;

async function uploadSet(session: Session, name: string) {
  const created = await request(t.app).post(`/api/teams/${session.teamId}/image-sets`).set(bearer(session)).send({ name });
  expect(created.status).toBe(201);
  const id = created.body.imageSet.id as number;
  let req = request(t.app).post(`/api/teams/${session.teamId}/image-sets/${id}/images`).set(bearer(session));
  for (const [i, tile] of seabedSet(21, 4, 32, 32).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    req = req.attach('files', png, `tile-${i}.png`);
  }
  expect((await req).status).toBe(201);
  const split = await request(t.app).post(`/api/teams/${session.teamId}/image-sets/${id}/split`).set(bearer(session)).send({ heldOutFraction: 0.5, seed: 3 });
  expect(split.status).toBe(200);
  return id;
}

let counter = 0;
async function newRun(): Promise<number> {
  const body = { name: `Run ${++counter}`, trainingSetId: setId, heldOutSetId: setId, patch: { width: 4, height: 4 }, bits: { from: 1, to: 2 }, maxIterations: 5 };
  const res = await request(t.app).post(runsUrl()).set(bearer(team.engineer)).send(body);
  expect(res.status).toBe(201);
  return res.body.run.id as number;
}

const count = async (table: string, where: Record<string, unknown>) =>
  Number(((await t.db.knex(table).where(where).count({ n: '*' })) as { n: number }[])[0].n);

const countIn = async (table: string, column: string, ids: number[]) =>
  Number(((await t.db.knex(table).whereIn(column, ids).count({ n: '*' })) as { n: number }[])[0].n);

async function waitForRun(runId: number): Promise<{ state: string; codebooks: { id: number }[] }> {
  for (let i = 0; i < 1200; i += 1) {
    const res = await request(t.app).get(`${runsUrl()}/${runId}`).set(bearer(team.engineer));
    if (['succeeded', 'failed', 'cancelled'].includes(res.body.run.state)) return res.body.run;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`run ${runId} never finished`);
}

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Run Delete Team');
  other = await signUp(t.app, { teamName: 'Other Run Team', email: uniqueEmail('other') });
  setId = await uploadSet(team.engineer, 'Seabed tiles');
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.composition.reconstructionPool.destroy();
  await t?.close();
});

describe('renaming a run', () => {
  it('lets an engineer and an admin rename a run, and records who did', async () => {
    const runId = await newRun();
    const byEngineer = await request(t.app).patch(`${runsUrl()}/${runId}`).set(bearer(team.engineer)).send({ name: '  Harbour 4x4  ' });
    expect(byEngineer.status).toBe(200);
    expect(byEngineer.body.run.name).toBe('Harbour 4x4');
    const byAdmin = await request(t.app).patch(`${runsUrl()}/${runId}`).set(bearer(team.admin)).send({ name: 'Harbour 4x4 final' });
    expect(byAdmin.status).toBe(200);
    expect((await request(t.app).get(`${runsUrl()}/${runId}`).set(bearer(team.viewer))).body.run.name).toBe('Harbour 4x4 final');
    const audit = await t.db.knex('audit_log').where({ action: 'run.renamed', target_id: runId }).orderBy('id');
    expect(audit.map((a: { actor_user_id: number }) => a.actor_user_id)).toEqual([team.engineer.user.id, team.admin.user.id]);
  });

  it('refuses a viewer with 403 and another team’s member with 404, leaving the name as it was', async () => {
    const runId = await newRun();
    expect((await request(t.app).patch(`${runsUrl()}/${runId}`).set(bearer(team.viewer)).send({ name: 'Nope' })).status).toBe(403);
    expect((await request(t.app).patch(`${runsUrl(other.teamId)}/${runId}`).set(bearer(other)).send({ name: 'Nope' })).status).toBe(404);
    expect((await request(t.app).get(`${runsUrl()}/${runId}`).set(bearer(team.viewer))).body.run.name).toBe(`Run ${counter}`);
  });

  it('refuses an empty, overlong or extra-field body with 400', async () => {
    const runId = await newRun();
    for (const body of [{ name: '   ' }, { name: 'x'.repeat(121) }, { name: 'ok', state: 'succeeded' }, {}]) {
      const res = await request(t.app).patch(`${runsUrl()}/${runId}`).set(bearer(team.engineer)).send(body);
      expect(res.status).toBe(400);
      expect(res.body.error.code).toBeTruthy();
    }
  });
});

describe('deleting a run', () => {
  it('refuses an engineer and a viewer with 403 and another team’s admin with 404, keeping the run', async () => {
    const runId = await newRun();
    expect((await request(t.app).delete(`${runsUrl()}/${runId}`).set(bearer(team.engineer))).status).toBe(403);
    expect((await request(t.app).delete(`${runsUrl()}/${runId}`).set(bearer(team.viewer))).status).toBe(403);
    expect((await request(t.app).delete(`${runsUrl(other.teamId)}/${runId}`).set(bearer(other))).status).toBe(404);
    expect(await count('runs', { id: runId })).toBe(1);
  });

  it('deletes a queued run with its queued job, and records it', async () => {
    const runId = await newRun();
    expect((await request(t.app).delete(`${runsUrl()}/${runId}`).set(bearer(team.admin))).status).toBe(204);
    expect((await request(t.app).get(`${runsUrl()}/${runId}`).set(bearer(team.admin))).status).toBe(404);
    expect(await count('jobs', { run_id: runId })).toBe(0);
    expect(await count('audit_log', { action: 'run.deleted', target_id: runId, actor_user_id: team.admin.user.id })).toBe(1);
    expect((await request(t.app).delete(`${runsUrl()}/${runId}`).set(bearer(team.admin))).status).toBe(404);
  });

  it('refuses a run whose job is running with 409 and keeps it whole', async () => {
    const runId = await newRun();
    // Marked running as the runner's claim does, so no worker races the test.
    const job = (await t.db.knex('jobs').where({ run_id: runId }).first()) as { id: number };
    await t.db.knex('jobs').where({ id: job.id }).update({ state: 'running', started_at: t.db.knex.fn.now(), heartbeat_at: t.db.knex.fn.now() });
    const res = await request(t.app).delete(`${runsUrl()}/${runId}`).set(bearer(team.admin));
    expect(res.status).toBe(409);
    expect(res.body.error.message).toMatch(/cancel it first/);
    expect(await count('runs', { id: runId })).toBe(1);
    expect(await count('jobs', { run_id: runId, state: 'running' })).toBe(1);
    // Once cancelled it goes.
    await t.db.knex('jobs').where({ id: job.id }).update({ state: 'cancelled' });
    expect((await request(t.app).delete(`${runsUrl()}/${runId}`).set(bearer(team.admin))).status).toBe(204);
  });

  it('removes a finished run’s codebooks, evaluations and reconstructions, keeps a codebook imported from it, and lets the sweep free the views', async () => {
    const runId = await newRun();
    await t.composition.jobs.runner.start();
    const run = await waitForRun(runId);
    await t.composition.jobs.runner.stop();
    expect(run.state).toBe('succeeded');
    const codebookId = run.codebooks[0].id;
    const heldOut = (await t.db.knex('run_images').where({ run_id: runId, role: 'held-out' }).first()) as { image_id: number };
    const view = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookId}/reconstruction/${heldOut.image_id}?view=error`).set(bearer(team.viewer));
    expect(view.status).toBe(200);
    const recon = (await t.db.knex('reconstructions').where({ codebook_id: codebookId }).first()) as { error_sha256: string };
    expect(existsSync(t.composition.contentStore.path(recon.error_sha256))).toBe(true);
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${codebookId}/export`).set(bearer(team.viewer));
    expect(exported.status).toBe(200);
    const imported = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.engineer)).send(exported.body);
    expect(imported.status).toBe(201);
    const codebookIds = run.codebooks.map((c) => c.id);
    expect(await countIn('evaluations', 'codebook_id', codebookIds)).toBeGreaterThan(0);

    expect((await request(t.app).delete(`${runsUrl()}/${runId}`).set(bearer(team.admin))).status).toBe(204);

    expect(await countIn('codebooks', 'id', codebookIds)).toBe(0);
    expect(await countIn('evaluations', 'codebook_id', codebookIds)).toBe(0);
    expect(await count('reconstructions', { codebook_id: codebookId })).toBe(0);
    expect(await count('run_images', { run_id: runId })).toBe(0);
    const importedId = imported.body.codebook.id as number;
    expect((await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${importedId}`).set(bearer(team.viewer))).status).toBe(200);
    // The images are the set's, not the run's.
    expect(await count('images', { id: heldOut.image_id })).toBe(1);

    const sweeper = createStoreSweeper({ db: t.composition.db, store: t.composition.contentStore, graceMs: hour, now: () => Date.now() + 2 * hour });
    await sweeper.sweep();
    expect(existsSync(t.composition.contentStore.path(recon.error_sha256))).toBe(false);
  });

  it('frees an image set its runs held: refused with 409 while a run uses it, deleted once that run is', async () => {
    const ownSet = await uploadSet(team.engineer, 'Held by one run');
    const body = { name: 'Only run of its set', trainingSetId: ownSet, heldOutSetId: ownSet, patch: { width: 4, height: 4 }, bits: 1 };
    const created = await request(t.app).post(runsUrl()).set(bearer(team.engineer)).send(body);
    expect(created.status).toBe(201);
    const setUrl = `/api/teams/${team.teamId}/image-sets/${ownSet}`;
    expect((await request(t.app).delete(setUrl).set(bearer(team.admin))).status).toBe(409);
    expect((await request(t.app).delete(`${runsUrl()}/${created.body.run.id}`).set(bearer(team.admin))).status).toBe(204);
    expect((await request(t.app).delete(setUrl).set(bearer(team.admin))).status).toBe(204);
  });
});
