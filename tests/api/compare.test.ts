import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { seabedPngs, createSetWith, finishedRun as runToSuccess } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let square: number;
let twin: number;
let wide: number;
let elsewhere: number;
let theirs: number;

const pngsOf = (seed: number, count: number) => seabedPngs(seed, count, 64, 48);

const setWith = (s: Session, name: string, files: Buffer[]) => createSetWith(t.app, s, name, files);

const finishedRun = (s: Session, body: object) => runToSuccess(t.app, s, body);

const compare = (s: Session, query: string) => request(t.app).get(`/api/teams/${s.teamId}/compare?${query}`).set(bearer(s));

beforeAll(async () => {
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Compare Team');
  outsider = await signUp(t.app, { teamName: 'Other Team' });
  const trainingSetId = await setWith(team.engineer, 'training', await pngsOf(41, 4));
  const heldOutSetId = await setWith(team.engineer, 'held-out', await pngsOf(42, 2));
  const otherHeldOut = await setWith(team.engineer, 'other held-out', await pngsOf(43, 2));
  const base = { trainingSetId, heldOutSetId, color: 'luma', bits: { from: 1, to: 5 }, init: 'split', seed: 5 };
  square = await finishedRun(team.engineer, { ...base, name: '4x4', patch: { width: 4, height: 4 } });
  twin = await finishedRun(team.engineer, { ...base, name: '4x4 again', patch: { width: 4, height: 4 } });
  wide = await finishedRun(team.engineer, { ...base, name: '4x2', patch: { width: 4, height: 2 } });
  elsewhere = await finishedRun(team.engineer, { ...base, name: '4x4 other list', heldOutSetId: otherHeldOut, patch: { width: 4, height: 4 } });
  const theirTraining = await setWith(outsider, 'their training', await pngsOf(44, 2));
  const theirHeldOut = await setWith(outsider, 'their held-out', await pngsOf(45, 1));
  theirs = await finishedRun(outsider, { ...base, trainingSetId: theirTraining, heldOutSetId: theirHeldOut, bits: 2, name: 'theirs', patch: { width: 4, height: 4 } });
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('compare', () => {
  it('gives a curve compared with an identical one a BD-rate and BD-PSNR of zero', async () => {
    const res = await compare(team.viewer, `runs=${square},${twin}`);
    expect(res.status).toBe(200);
    expect(res.body.heldOutMismatch).toBe(false);
    expect(res.body.pairs).toHaveLength(2);
    for (const pair of res.body.pairs) {
      expect(pair.sameHeldOut).toBe(true);
      expect(pair.reason).toBeNull();
      expect(pair.bdRate).toBeCloseTo(0, 9);
      expect(pair.bdPsnr).toBeCloseTo(0, 9);
    }
    expect(res.body.differingKeys).toEqual([]);
  });

  it('compares runs on the same held-out list with BD values that reverse with the order', async () => {
    const res = await compare(team.viewer, `runs=${square},${wide}&rate=fixed`);
    expect(res.status).toBe(200);
    expect(res.body.rate).toBe('fixed');
    const forward = res.body.pairs.find((p: { reference: number }) => p.reference === square);
    const backward = res.body.pairs.find((p: { reference: number }) => p.reference === wide);
    expect(typeof forward.bdRate).toBe('number');
    expect(typeof forward.bdPsnr).toBe('number');
    expect(forward.bdPsnr).not.toBe(0);
    // BD-PSNR is a mean difference over one shared log-rate interval, so swapping the curves only flips its sign (VCEG-M33).
    expect(backward.bdPsnr).toBeCloseTo(-forward.bdPsnr, 9);
    expect(res.body.differingKeys).toEqual(['patch.height']);
    // The curves use the requested rate: fixed bpp = bits / (w·h) (common practice).
    const wideRun = res.body.runs.find((r: { id: number }) => r.id === wide);
    expect(wideRun.points.map((p: { bpp: number }) => p.bpp)).toEqual([1, 2, 3, 4, 5].map((b) => b / 8));
    const [lo, hi] = res.body.axes.bpp;
    for (const run of res.body.runs) for (const p of [...run.points, ...run.jpeg]) expect(p.bpp >= lo && p.bpp <= hi).toBe(true);
  });

  it('measures each run against JPEG on its own held-out list', async () => {
    const res = await compare(team.viewer, `runs=${square},${wide}`);
    expect(res.body.againstJpeg.map((x: { runId: number }) => x.runId)).toEqual([square, wide]);
    for (const run of res.body.runs) expect(run.jpeg.length).toBeGreaterThan(0);
    const withPsnr = res.body.againstJpeg.filter((x: { bdPsnr: number | null }) => x.bdPsnr !== null);
    expect(withPsnr.length).toBeGreaterThan(0);
  });

  it('flags runs on different held-out lists and leaves their BD values null with a reason', async () => {
    const res = await compare(team.viewer, `runs=${square},${elsewhere},${twin}`);
    expect(res.status).toBe(200);
    expect(res.body.heldOutMismatch).toBe(true);
    expect(res.body.pairs).toHaveLength(6);
    for (const pair of res.body.pairs) {
      const mixed = pair.reference === elsewhere || pair.test === elsewhere;
      expect(pair.sameHeldOut).toBe(!mixed);
      if (mixed) {
        expect(pair.bdRate).toBeNull();
        expect(pair.bdPsnr).toBeNull();
        expect(pair.reason).toMatch(/different held-out/);
      } else {
        expect(pair.bdRate).not.toBeNull();
      }
    }
  });

  it('refuses one run, seven runs, a repeated run and a malformed list with 400', async () => {
    for (const query of [`runs=${square}`, `runs=${[1, 2, 3, 4, 5, 6, 7].join(',')}`, `runs=${square},${square}`, 'runs=1,x', '']) {
      const res = await compare(team.viewer, query);
      expect(res.status).toBe(400);
      expect(res.body.error.code).toBe('validation_failed');
    }
  });

  it("answers 404 when one of the runs is another team's", async () => {
    const res = await compare(team.viewer, `runs=${square},${theirs}`);
    expect(res.status).toBe(404);
    expect(res.body.error.code).toBe('not_found');
    expect((await compare(outsider, `runs=${square},${twin}`)).status).toBe(404);
    expect((await request(t.app).get(`/api/teams/${team.teamId}/compare?runs=${square},${twin}`).set(bearer(outsider))).status).toBe(404);
  });
});
