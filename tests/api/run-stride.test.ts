import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
import { createSetWith, seabedPngs, waitForRun } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let training: number;
let heldOut: number;

beforeAll(async () => {
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Stride Team');
  // Three 24 × 20 training images (invented): 6 · 5 = 30 non-overlapping 4 × 4 patches each, 90 in all.
  training = await createSetWith(t.app, team.engineer, 'stride training', await seabedPngs(41, 3, 24, 20));
  heldOut = await createSetWith(t.app, team.engineer, 'stride held-out', await seabedPngs(42, 1, 24, 20));
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

const body = (extra: object) => ({ name: `Stride ${Math.random().toString(36).slice(2, 7)}`, trainingSetId: training, heldOutSetId: heldOut, patch: { width: 4, height: 4 }, bits: 7, seed: 3, ...extra });

describe('a run with a patch stride', () => {
  it('refuses 2^7 codewords from 90 non-overlapping patches, and trains them from the 297 a stride of 2 gives', async () => {
    const plain = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send(body({}));
    expect(plain.body.error.code).toBe('validation_failed');
    expect(JSON.stringify(plain.body.error.details)).toMatch(/give 90 vectors of 4×4; b = 7 needs at least 128/);

    const created = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send(body({ stride: 2 }));
    expect(created.status).toBe(201);
    expect(created.body.run.normalized.stride).toBe(2);
    const run = await waitForRun(t.app, team.engineer, created.body.run.id);
    expect(run.error).toBeNull();
    expect(run.state).toBe('succeeded');
    const codebooks = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    const mine = (codebooks.body.codebooks as { id: number; runId: number }[]).find((c) => c.runId === created.body.run.id)!;
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${mine.id}/export`).set(bearer(team.viewer));
    // (24 − 4)/2 + 1 = 11 and (20 − 4)/2 + 1 = 9 positions: 99 patches an image, 297 in all; the document records the stride.
    expect(exported.body.training.stride).toBe(2);
    expect(exported.body.training.vectorCount).toBe(297);
  });

  it('refuses a stride past the largest patch side with 400 and writes no run', async () => {
    const before = await t.db.knex('runs').count({ n: '*' }).first();
    const res = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send(body({ stride: 17 }));
    expect(res.status).toBe(400);
    expect(JSON.stringify(res.body.error)).toMatch(/stride/);
    expect(await t.db.knex('runs').count({ n: '*' }).first()).toEqual(before);
  });
});
