import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { demoAccounts, seedDemo } from '../../server/seed/demo';
import { demoContentDeps, demoRunNames, demoSets, seedDemoContent } from '../../server/seed/demo-content';
import { createTestApp, type TestApp } from '../helpers/api';

let t: TestApp;
let teamId: number;
let first: { sets: number; runs: number };
let token: string;

const counts = async () => {
  const out: Record<string, number> = {};
  for (const table of ['image_sets', 'images', 'runs', 'jobs', 'codebooks', 'evaluations', 'evaluation_images', 'baseline_points']) {
    out[table] = Number((await t.db.knex(table).count({ n: '*' }).first())!.n);
  }
  return out;
};

beforeAll(async () => {
  t = await createTestApp();
  const seeded = await seedDemo(t.composition.db, { bindHost: '127.0.0.1', hashPassword: (p) => t.composition.services.accounts.hashPassword(p) });
  teamId = seeded.teamId;
  first = await seedDemoContent(demoContentDeps(t.composition), teamId);
  const viewer = demoAccounts.find((a) => a.role === 'viewer')!;
  const login = await request(t.app).post('/api/auth/login').send({ email: viewer.email, password: viewer.password });
  expect(login.status).toBe(200);
  token = login.body.token;
});

afterAll(async () => {
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

const get = (path: string) => request(t.app).get(`/api/teams/${teamId}${path}`).set({ Authorization: `Bearer ${token}` });

describe('demo content', () => {
  it('gives the demo team a training set and a held-out set of different tiles', async () => {
    expect(first).toEqual({ sets: 2, runs: 2 });
    const sets = await t.db.knex('image_sets').where({ team_id: teamId }).orderBy('id');
    expect(sets.map((s) => s.name)).toEqual([demoSets.training.name, demoSets.heldOut.name]);
    const training = await t.db.knex('images').where({ set_id: sets[0].id }).pluck('sha256');
    const heldOut = await t.db.knex('images').where({ set_id: sets[1].id }).pluck('sha256');
    expect(training).toHaveLength(demoSets.training.count);
    expect(heldOut).toHaveLength(demoSets.heldOut.count);
    expect(training.filter((h) => heldOut.includes(h))).toEqual([]);
  });

  it('shows a viewer two finished runs with a curve and reference codec points at once', async () => {
    const runs = await get('/runs');
    expect(runs.status).toBe(200);
    const demo = runs.body.runs.filter((r: { name: string }) => (demoRunNames as readonly string[]).includes(r.name));
    expect(demo).toHaveLength(2);
    for (const run of demo) {
      expect(run.state).toBe('succeeded');
      const curve = await get(`/runs/${run.id}/curve`);
      expect(curve.body.points.map((p: { bits: number }) => p.bits)).toEqual([1, 2, 3, 4, 5, 6]);
      expect(curve.body.baselines.jpeg.length).toBeGreaterThan(0);
      const codebook = await get(`/codebooks/${curve.body.points[5].codebookId}`);
      expect(codebook.status).toBe(200);
      expect(codebook.body.codebook.size).toBe(64);
    }
  });

  it('compares the two demo runs on their shared held-out set', async () => {
    const ids = (await t.db.knex('runs').where({ team_id: teamId }).orderBy('id').pluck('id')) as number[];
    const res = await get(`/compare?runs=${ids.join(',')}`);
    expect(res.status).toBe(200);
    expect(res.body.heldOutMismatch).toBe(false);
    expect(res.body.differingKeys).toEqual(['meanBits']);
    for (const pair of res.body.pairs) expect(typeof pair.bdPsnr).toBe('number');
  });

  it('changes nothing when it runs again', async () => {
    const before = await counts();
    expect(await seedDemoContent(demoContentDeps(t.composition), teamId)).toEqual({ sets: 0, runs: 0 });
    expect(await counts()).toEqual(before);
  });
});
