import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { BD_TABLE_CSV_COLUMNS } from '../../server/engine/metrics/bd-table';
import { BD_MIN_OVERLAP_FRACTION, CURVE_STRUCTURE_LABELS, DEFAULT_BD_METHOD } from '../../server/engine/vocabulary';
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
    for (const run of res.body.runs) for (const p of [...run.points, ...run.baselines.jpeg, ...run.baselines.webp, ...run.baselines.avif]) expect(p.bpp >= lo && p.bpp <= hi).toBe(true);
  });

  it('measures each run against JPEG, WebP and AVIF on its own held-out list', async () => {
    const res = await compare(team.viewer, `runs=${square},${wide}`);
    type Row = { runId: number; codec: string; bdRate: number | null; bdPsnr: number | null; reason: string | null };
    const rows: Row[] = res.body.againstBaselines;
    expect(rows.map((x) => `${x.runId}:${x.codec}`)).toEqual([square, wide].flatMap((id) => ['jpeg', 'webp', 'avif'].map((c) => `${id}:${c}`)));
    for (const run of res.body.runs) {
      // JPEG and WebP are always written by sharp; AVIF only where the build encodes it.
      expect(run.baselines.jpeg.length).toBeGreaterThan(0);
      expect(run.baselines.webp.length).toBeGreaterThan(0);
      for (const codec of ['jpeg', 'webp', 'avif'] as const) {
        const row = rows.find((x) => x.runId === run.id && x.codec === codec)!;
        if (run.baselines[codec].length === 0) {
          expect(row.bdRate).toBeNull();
          expect(row.reason).toMatch(/no AVIF points/);
        } else {
          if (row.bdPsnr === null) expect(row.reason).not.toBeNull();
        }
      }
    }
    const jpegPsnr = rows.filter((x) => x.codec === 'jpeg').map((x) => x.bdPsnr);
    const webpPsnr = rows.filter((x) => x.codec === 'webp').map((x) => x.bdPsnr);
    expect(jpegPsnr.some((v) => v !== null)).toBe(true);
    // Each codec's figure comes from that codec's own curve, not one figure repeated.
    expect(webpPsnr).not.toEqual(jpegPsnr);
  });

  it('names the fitting method and averages over the rate and PSNR intervals both curves cover', async () => {
    const byDefault = await compare(team.viewer, `runs=${square},${wide}`);
    expect(byDefault.body.method).toBe(DEFAULT_BD_METHOD);
    const cubic = await compare(team.viewer, `runs=${square},${wide}&method=cubic`);
    expect(cubic.status).toBe(200);
    expect(cubic.body.method).toBe('cubic');
    const pair = cubic.body.pairs.find((p: { reference: number }) => p.reference === square);
    expect(pair.method).toBe('cubic');
    const ref = cubic.body.runs.find((r: { id: number }) => r.id === square).points;
    const test = cubic.body.runs.find((r: { id: number }) => r.id === wide).points;
    const range = (points: { bpp: number }[]) => [Math.min(...points.map((p) => p.bpp)), Math.max(...points.map((p) => p.bpp))];
    const [rLo, rHi] = range(ref);
    const [tLo, tHi] = range(test);
    // The shared rate interval is the intersection of the two curves' ranges, no wider.
    expect(pair.shared.bpp[0]).toBeCloseTo(Math.max(rLo, tLo), 9);
    expect(pair.shared.bpp[1]).toBeCloseTo(Math.min(rHi, tHi), 9);
    expect(pair.shortOverlap).toBe(pair.sharedFraction.bpp < BD_MIN_OVERLAP_FRACTION || pair.sharedFraction.psnr < BD_MIN_OVERLAP_FRACTION);
    const pchipPair = byDefault.body.pairs.find((p: { reference: number }) => p.reference === square);
    expect(pchipPair.method).toBe('pchip');
    expect(pchipPair.shared).toEqual(pair.shared);
  });

  it('refuses an unknown fitting method with 400', async () => {
    const res = await compare(team.viewer, `runs=${square},${wide}&method=spline`);
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
  });

  it('downloads the Bjøntegaard table as CSV and JSON with the figures of the comparison', async () => {
    const shown = (await compare(team.viewer, `runs=${square},${wide}&method=cubic&rate=fixed`)).body;
    const base = `/api/teams/${team.teamId}/compare/bd-table?runs=${square},${wide}&method=cubic&rate=fixed`;
    const json = await request(t.app).get(`${base}&format=json`).set(bearer(team.viewer));
    expect(json.status).toBe(200);
    expect(json.headers['content-disposition']).toMatch(/^attachment; filename="?bd-table-cubic-fixed\.json"?$/);
    expect(json.body.method).toBe('cubic');
    expect(json.body.minOverlapFraction).toBe(BD_MIN_OVERLAP_FRACTION);
    expect(json.body.rows).toHaveLength(2 + 2 * 3);
    const jpegRow = json.body.rows.find((r: { codec: string | null; testRunId: number }) => r.codec === 'jpeg' && r.testRunId === wide);
    const shownJpeg = shown.againstBaselines.find((r: { codec: string; runId: number }) => r.codec === 'jpeg' && r.runId === wide);
    expect(jpegRow.reference).toBe('JPEG');
    // Each curve is named by its run and its structure (a full-search run has the one curve).
    expect(jpegRow.test).toBe(`4x2 · ${CURVE_STRUCTURE_LABELS.full}`);
    expect(jpegRow.bdRate).toBe(shownJpeg.bdRate);
    expect(jpegRow.bdPsnr).toBe(shownJpeg.bdPsnr);

    const csv = await request(t.app).get(`${base}&format=csv`).set(bearer(team.viewer));
    expect(csv.status).toBe(200);
    expect(csv.headers['content-type']).toMatch(/^text\/csv/);
    const lines = csv.text.split('\r\n').filter(Boolean);
    expect(lines[0]).toBe(BD_TABLE_CSV_COLUMNS.join(','));
    expect(lines).toHaveLength(1 + json.body.rows.length);
    const col = (name: string) => BD_TABLE_CSV_COLUMNS.indexOf(name as (typeof BD_TABLE_CSV_COLUMNS)[number]);
    const csvJpeg = lines.map((l) => l.split(',')).find((c) => c[col('reference')] === 'JPEG' && c[col('test')] === `4x2 · ${CURVE_STRUCTURE_LABELS.full}`)!;
    expect(csvJpeg[col('method')]).toBe('cubic');
    expect(csvJpeg[col('rate')]).toBe('fixed');
    expect(csvJpeg[col('bd_psnr_db')]).toBe(jpegRow.bdPsnr === null ? '' : String(jpegRow.bdPsnr));
    expect(csvJpeg[col('shared_bpp_from')]).toBe(jpegRow.shared.bpp === null ? '' : String(jpegRow.shared.bpp[0]));
  });

  it("answers 404 for a table of another team's runs", async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/compare/bd-table?runs=${square},${theirs}`).set(bearer(team.viewer));
    expect(res.status).toBe(404);
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
