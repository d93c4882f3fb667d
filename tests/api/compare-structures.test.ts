// The compare page's curves per structure: real runs of several structures through the real runner and job engine,
// each structure of each run its own series with its own Bjøntegaard figures, checked against a second, plain
// implementation of the Bjøntegaard calculation written out below from its published definition.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { serializeCodebook, trainTreeCodebook } from '../../server/engine';
import { BD_MIN_POINTS, curveLabel } from '../../server/engine/vocabulary';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
import { splitSeabedSet, untilEvaluated } from '../helpers/studio';

// ---- Bjøntegaard deltas, written out plainly (G. Bjøntegaard, ITU-T VCEG-M33, 2001) ----
// BD-PSNR: mean difference (test − reference) of PSNR as a function of ln rate over the shared ln-rate interval;
// BD-rate: (e^Δ − 1)·100 % with Δ the mean difference of ln rate as a function of PSNR over the shared PSNR interval.
// Curves: `cubic`, the least-squares polynomial of degree min(3, n − 1) (VCEG-M33 takes four points; with three a
// quadratic, as the studio documents), solved here by normal equations with Gaussian elimination; `pchip`, the
// monotone Hermite interpolant (Fritsch & Carlson, SIAM J. Numer. Anal. 17, 1980; end slopes by the one-sided
// three-point rule, as SciPy's PchipInterpolator documents). Both integrated by Simpson's rule on each piece, which is
// exact for polynomials up to degree 3 (any numerical-analysis text), so nothing here shares code with the engine.
type Pt = { x: number; y: number };
type Method = 'cubic' | 'pchip';

function lstsq(raw: Pt[], degree: number): (x: number) => number {
  const m = degree + 1;
  // In x − mean x, so the normal equations of PSNR values near 35 dB stay well conditioned.
  const centre = raw.reduce((s, p) => s + p.x, 0) / raw.length;
  const points = raw.map((p) => ({ x: p.x - centre, y: p.y }));
  const a = Array.from({ length: m }, (_, i) => Array.from({ length: m + 1 }, (_, j) => (j < m ? points.reduce((s, p) => s + p.x ** (i + j), 0) : points.reduce((s, p) => s + p.y * p.x ** i, 0))));
  for (let c = 0; c < m; c += 1) {
    const pivot = a.slice(c).reduce((best, row, k) => (Math.abs(row[c]) > Math.abs(a[best][c]) ? c + k : best), c);
    [a[c], a[pivot]] = [a[pivot], a[c]];
    for (let r = 0; r < m; r += 1) {
      if (r === c) continue;
      const f = a[r][c] / a[c][c];
      for (let k = c; k <= m; k += 1) a[r][k] -= f * a[c][k];
    }
  }
  const coef = a.map((row, i) => row[m] / row[i]);
  return (x) => coef.reduce((s, c, i) => s + c * (x - centre) ** i, 0);
}

function pchip(points: Pt[]): { at: (x: number) => number; knots: number[] } {
  const xs = points.map((p) => p.x);
  const ys = points.map((p) => p.y);
  const n = xs.length;
  const h = xs.slice(1).map((x, i) => x - xs[i]);
  const d = h.map((hi, i) => (ys[i + 1] - ys[i]) / hi);
  const slope = xs.map((_, k) => {
    if (k === 0 || k === n - 1) {
      const [h0, h1, d0, d1] = k === 0 ? [h[0], h[1], d[0], d[1]] : [h[n - 2], h[n - 3], d[n - 2], d[n - 3]];
      const s = ((2 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
      if (Math.sign(s) !== Math.sign(d0)) return 0;
      return Math.sign(d0) !== Math.sign(d1) && Math.abs(s) > Math.abs(3 * d0) ? 3 * d0 : s;
    }
    if (d[k - 1] * d[k] <= 0) return 0;
    const w1 = 2 * h[k] + h[k - 1];
    const w2 = h[k] + 2 * h[k - 1];
    return (w1 + w2) / (w1 / d[k - 1] + w2 / d[k]);
  });
  const at = (x: number) => {
    const k = Math.min(n - 2, Math.max(0, xs.findIndex((_, i) => i < n - 1 && x <= xs[i + 1])));
    const t = (x - xs[k]) / h[k];
    return (2 * t ** 3 - 3 * t ** 2 + 1) * ys[k] + (t ** 3 - 2 * t ** 2 + t) * h[k] * slope[k] + (-2 * t ** 3 + 3 * t ** 2) * ys[k + 1] + (t ** 3 - t ** 2) * h[k] * slope[k + 1];
  };
  return { at, knots: xs };
}

/** ∫ over [lo, hi] of the curve through the points (sorted by x), by Simpson's rule between consecutive breakpoints. */
function integral(points: Pt[], method: Method, degree: number, lo: number, hi: number): number {
  const sorted = [...points].sort((p, q) => p.x - q.x);
  const curve = method === 'cubic' ? { at: lstsq(sorted, degree), knots: [] as number[] } : pchip(sorted);
  const breaks = [lo, ...curve.knots.filter((x) => x > lo && x < hi), hi];
  let sum = 0;
  for (let i = 0; i + 1 < breaks.length; i += 1) {
    const [a, b] = [breaks[i], breaks[i + 1]];
    sum += ((b - a) / 6) * (curve.at(a) + 4 * curve.at((a + b) / 2) + curve.at(b));
  }
  return sum;
}

/** BD-rate (%) and BD-PSNR (dB) of `test` against `reference`; null where the curves share no interval or a curve is too short. */
function plainBd(reference: { bpp: number; psnr: number | null }[], test: { bpp: number; psnr: number | null }[], method: Method) {
  const use = (c: typeof reference) => c.filter((p) => p.bpp > 0 && p.psnr !== null && Number.isFinite(p.psnr)).map((p) => ({ lr: Math.log(p.bpp), psnr: p.psnr as number }));
  const r = use(reference);
  const t = use(test);
  if (r.length < 3 || t.length < 3) return null;
  const distinct = (v: number[]) => new Set(v).size === v.length;
  if (![r, t].every((c) => distinct(c.map((p) => p.lr)) && distinct(c.map((p) => p.psnr)))) return null;
  const degree = method === 'cubic' ? Math.min(3, r.length - 1, t.length - 1) : 3;
  const shared = (a: number[], b: number[]) => [Math.max(Math.min(...a), Math.min(...b)), Math.min(Math.max(...a), Math.max(...b))];
  const [rLo, rHi] = shared(r.map((p) => p.lr), t.map((p) => p.lr));
  const [pLo, pHi] = shared(r.map((p) => p.psnr), t.map((p) => p.psnr));
  const psnrOf = (c: typeof r) => c.map((p) => ({ x: p.lr, y: p.psnr }));
  const rateOf = (c: typeof r) => c.map((p) => ({ x: p.psnr, y: p.lr }));
  const bdPsnr = rHi > rLo ? (integral(psnrOf(t), method, degree, rLo, rHi) - integral(psnrOf(r), method, degree, rLo, rHi)) / (rHi - rLo) : null;
  const bdRate = pHi > pLo ? (Math.exp((integral(rateOf(t), method, degree, pLo, pHi) - integral(rateOf(r), method, degree, pLo, pHi)) / (pHi - pLo)) - 1) * 100 : null;
  return { bdRate, bdPsnr };
}

describe.each(['cubic', 'pchip'] as const)('the plain Bjøntegaard calculation (%s) on the hand-worked example', (method) => {
  it('gives the figures worked out by hand for two straight lines over a partly shared interval', () => {
    // The worked example of tests/reference/bd-rate.test.ts: reference PSNR = 30 + 2 ln R (ln R 0..3), test
    // PSNR = 30 + 3 ln R (ln R 1.5..4.5). Shared ln R [1.5, 3]: BD-PSNR = mean of ln R = 2.25 dB; shared PSNR
    // [34.5, 36]: Δ ln R = −(P − 30)/6, mean −0.875, BD-rate = (e^−0.875 − 1)·100 %.
    const line = (a: number, lnRates: number[]) => lnRates.map((l) => ({ bpp: Math.exp(l), psnr: 30 + a * l }));
    const r = plainBd(line(2, [0, 1, 2, 3]), line(3, [1.5, 2.5, 3.5, 4.5]), method)!;
    expect(r.bdPsnr).toBeCloseTo(2.25, 9);
    expect(r.bdRate).toBeCloseTo((Math.exp(-0.875) - 1) * 100, 9);
  });
});

// ---- real runs of several structures ----
let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let fullRun: number;
let treeRun: number;
let residualRun: number;

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Structures Compare Team');
  const setId = await splitSeabedSet(t.app, team.engineer, 'Seabed tiles', 31, 4, 48, 32);
  await t.composition.jobs.runner.start();
  const base = { trainingSetId: setId, heldOutSetId: setId, patch: { width: 2, height: 2 }, maxIterations: 10, seed: 4 };
  const start = async (body: object) => {
    const created = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send({ ...base, ...body });
    expect(created.status, JSON.stringify(created.body)).toBe(201);
    return created.body.run.id as number;
  };
  // Full search b = 1..4 with a λ sweep of three from its 16 codewords; a balanced tree of depths 1..3; residual
  // stages for b = 2 and 3 only, two points, short of what a BD figure needs.
  fullRun = await start({ name: 'full + λ', bits: { from: 1, to: 4 }, lambdas: [2, 30, 400] });
  treeRun = await start({ name: 'tree', bits: { from: 1, to: 3 }, structure: 'tree' });
  residualRun = await start({ name: 'residual', bits: { from: 2, to: 3 }, structure: 'residual', stages: 2 });
  for (const id of [fullRun, treeRun, residualRun]) await untilEvaluated(t.app, team.engineer, id);
  await addGreedyTrees();
}, 600_000);

/**
 * Greedy-grown trees (Riskin & Gray 1991) of 3, 5 and 6 leaves, trained by the engine on 2×2 luma blocks of the same
 * seabed tiles, imported, filed under the tree run and evaluated on its held-out images through the evaluate route:
 * the studio's run form trains balanced trees only, so this is how a run comes to hold greedy ones here.
 */
async function addGreedyTrees(): Promise<void> {
  const blocks: number[] = [];
  for (const tile of seabedSet(31, 4, 48, 32)) {
    // Rec. ITU-R BT.601 luma weights.
    const luma = (x: number, y: number) => {
      const i = (y * tile.width + x) * 3;
      return 0.299 * tile.rgb[i] + 0.587 * tile.rgb[i + 1] + 0.114 * tile.rgb[i + 2];
    };
    for (let y = 0; y + 2 <= tile.height; y += 2) for (let x = 0; x + 2 <= tile.width; x += 2) blocks.push(luma(x, y), luma(x + 1, y), luma(x, y + 1), luma(x + 1, y + 1));
  }
  const vectors = Float32Array.from(blocks);
  const { body: detail } = await request(t.app).get(`/api/teams/${team.teamId}/runs/${treeRun}`).set(bearer(team.engineer));
  for (const leaves of [3, 5, 6]) {
    const { codebook } = await trainTreeCodebook(vectors, 4, {
      growth: { kind: 'greedy', leaves }, init: 'split', seed: 4, maxIterations: 10, source: 'seabed tiles', preprocessing: { kind: 'none' },
      patch: { width: 2, height: 2, channels: 1, color: 'luma' },
    });
    expect(codebook.structure).toMatchObject({ kind: 'tree', balanced: false });
    const imported = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.engineer)).set('Content-Type', 'application/json').send(serializeCodebook(codebook));
    expect(imported.status, JSON.stringify(imported.body)).toBe(201);
    const id = imported.body.codebook.id as number;
    await t.db.knex('codebooks').where({ id }).update({ run_id: treeRun });
    const queued = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/${id}/evaluate`).set(bearer(team.engineer)).send({ heldOutImageIds: detail.run.normalized.heldOutImageIds });
    expect(queued.status, JSON.stringify(queued.body)).toBeLessThan(300);
    for (let i = 0; ; i += 1) {
      const { body } = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${id}/evaluations`).set(bearer(team.engineer));
      if (body.evaluations.some((e: { heldOutHash: string }) => e.heldOutHash === detail.run.heldOutHash)) break;
      if (i > 1200) throw new Error('the greedy tree was not evaluated');
      await new Promise((r) => setTimeout(r, 100));
    }
  }
}

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

type Point = { bpp: number; psnr: number | null; codebookId: number; size: number; lambda: number | null };
type Series = { id: string; runId: number; structure: string; meanBits: number; label: string; points: Point[]; usablePoints: number; enoughPoints: boolean };
type Figures = { bdRate: number | null; bdPsnr: number | null; reason: string | null; method: string };
type Compared = {
  runs: { id: number; name: string; series: Series[]; baselines: Record<'jpeg' | 'webp' | 'avif', { bpp: number; psnr: number | null }[]> }[];
  seriesPairs: (Figures & { reference: string; test: string })[];
  seriesAgainstBaselines: (Figures & { seriesId: string; runId: number; codec: 'jpeg' | 'webp' | 'avif' })[];
  bdMinPoints: number;
};

const compare = async (query: string): Promise<Compared> => {
  const res = await request(t.app).get(`/api/teams/${team.teamId}/compare?${query}`).set(bearer(team.viewer));
  expect(res.status, JSON.stringify(res.body)).toBe(200);
  return res.body as Compared;
};

/** A figure the API gave equals the plain calculation's; where that has none, the API has none either and says why. */
function expectSame(given: Figures, plain: ReturnType<typeof plainBd>): number {
  if (plain === null) {
    expect(given.bdRate).toBeNull();
    expect(given.reason).not.toBeNull();
    return 0;
  }
  let checked = 0;
  for (const key of ['bdRate', 'bdPsnr'] as const) {
    if (plain[key] === null) expect(given[key]).toBeNull();
    else {
      expect(given[key]).not.toBeNull();
      expect(given[key]!).toBeCloseTo(plain[key], 6);
      checked += 1;
    }
  }
  return checked;
}

describe('compare with one series per structure', () => {
  it('makes each structure of each run its own series, named by the run vocabulary', async () => {
    const body = await compare(`runs=${fullRun},${treeRun},${residualRun}`);
    const series = body.runs.flatMap((r) => r.series);
    expect(series.map((s) => [s.runId, s.structure])).toEqual([
      [fullRun, 'full'], [fullRun, 'entropy-constrained'], [treeRun, 'tree-balanced'], [treeRun, 'tree-greedy'], [residualRun, 'residual'],
    ]);
    for (const s of series) {
      expect(s.id).toBe(`${s.runId}:${s.structure}`);
      expect(s.label).toBe(curveLabel(s.structure as Parameters<typeof curveLabel>[0], 0));
    }
    const bySeries = new Map(series.map((s) => [s.structure, s]));
    // b = 1..4 full search, three λ, depths 1..3, three greedy trees, residual b = 2 and 3.
    expect(series.map((s) => s.points.length)).toEqual([4, 3, 3, 3, 2]);
    // A greedy tree of L leaves has 2L − 1 nodes in its table.
    expect(bySeries.get('tree-greedy')!.points.map((p) => p.size)).toEqual([5, 9, 11]);
    // A λ sweep is ordered by λ, largest first; its points are the entropy-constrained codebooks alone.
    expect(bySeries.get('entropy-constrained')!.points.map((p) => p.lambda)).toEqual([400, 30, 2]);
    expect(bySeries.get('full')!.points.every((p) => p.lambda === null)).toBe(true);
  });

  it.each(['pchip', 'cubic'] as const)('gives each series BD figures (%s) equal to the plain calculation from its points', async (method) => {
    const body = await compare(`runs=${fullRun},${treeRun},${residualRun}&method=${method}`);
    const series = new Map(body.runs.flatMap((r) => r.series.map((s) => [s.id, { ...s, run: r }] as const)));
    const checked = new Map<string, number>();
    const count = (id: string, n: number) => checked.set(id, (checked.get(id) ?? 0) + n);
    for (const row of body.seriesAgainstBaselines) {
      const s = series.get(row.seriesId)!;
      expect(row.method).toBe(method);
      if (!s.enoughPoints) continue;
      count(s.id, expectSame(row, plainBd(s.run.baselines[row.codec], s.points, method)));
    }
    // Every ordered pair of the five series, a run's own two included.
    expect(body.seriesPairs).toHaveLength(5 * 4);
    for (const pair of body.seriesPairs) {
      const [reference, test] = [series.get(pair.reference)!, series.get(pair.test)!];
      if (!reference.enoughPoints || !test.enoughPoints) continue;
      const n = expectSame(pair, plainBd(reference.points, test.points, method));
      count(reference.id, n);
      count(test.id, n);
    }
    // Each series with enough points had figures of its own compared, not one figure repeated.
    for (const s of series.values()) if (s.enoughPoints) expect(checked.get(s.id) ?? 0, s.id).toBeGreaterThan(0);
    const psnrs = body.seriesAgainstBaselines.filter((r) => r.codec === 'jpeg' && r.bdPsnr !== null).map((r) => r.bdPsnr);
    expect(new Set(psnrs).size).toBe(psnrs.length);
  });

  it('gives a series short of the points BD needs a "not enough points" state instead of figures', async () => {
    const body = await compare(`runs=${fullRun},${residualRun}`);
    expect(body.bdMinPoints).toBe(BD_MIN_POINTS);
    const residual = body.runs.find((r) => r.id === residualRun)!.series[0];
    expect(residual).toMatchObject({ structure: 'residual', usablePoints: 2, enoughPoints: false });
    const rows = [
      ...body.seriesAgainstBaselines.filter((r) => r.seriesId === residual.id),
      ...body.seriesPairs.filter((p) => p.reference === residual.id || p.test === residual.id),
    ];
    // Against three codecs, and both ways against the full-search and the λ series.
    expect(rows).toHaveLength(3 + 2 * 2);
    for (const row of rows) {
      expect(row.bdRate).toBeNull();
      expect(row.bdPsnr).toBeNull();
      expect(row.reason).toMatch(/^not enough points: residual · Residual \(multistage\) has 2 usable, a BD figure needs 3$/);
    }
  });

  it('names each curve of the BD table by its run and structure', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/compare/bd-table?runs=${fullRun},${treeRun}&format=json`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const rows = res.body.rows as { reference: string; test: string; testSeries: string; referenceSeries: string | null; codec: string | null }[];
    // Four series: 4 × 3 ordered pairs and 4 × 3 rows against the codecs.
    expect(rows).toHaveLength(12 + 12);
    const treeAgainstJpeg = rows.find((r) => r.codec === 'jpeg' && r.testSeries === `${treeRun}:tree-balanced`)!;
    expect(treeAgainstJpeg).toMatchObject({ reference: 'JPEG', test: 'tree · Tree-structured, balanced', referenceSeries: null });
    const sweepAgainstFull = rows.find((r) => r.referenceSeries === `${fullRun}:full` && r.testSeries === `${fullRun}:entropy-constrained`)!;
    expect(sweepAgainstFull).toMatchObject({ reference: 'full + λ · Full search', test: 'full + λ · Entropy-constrained (λ sweep)' });
  });
});
