import { createHash } from 'node:crypto';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addMember, bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { createSetWith, finishedRun, seabedPngs } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let reviewer: Session;
let outsider: Session;
let trainingSetId: number;
let heldOutSetId: number;
let runId: number;
let codebooks: { id: number; size: number; checksum: string }[];
let releaseId: number;

const url = (path: string) => `/api/teams/${team.teamId}${path}`;
const propose = (s: Session, codebookId: number, body: object) => request(t.app).post(url(`/codebooks/${codebookId}/proposal`)).set(bearer(s)).send(body);
const approve = (s: Session, id: number, body: object = {}) => request(t.app).post(url(`/releases/${id}/approve`)).set(bearer(s)).send(body);
const sendBack = (s: Session, id: number, body: object) => request(t.app).post(url(`/releases/${id}/return`)).set(bearer(s)).send(body);
const activity = (s: Session, query = '') => request(t.app).get(url(`/activity${query ? `?${query}` : ''}`)).set(bearer(s));

beforeAll(async () => {
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Harbour Optics');
  reviewer = await addMember(t, team.admin, 'engineer');
  outsider = await signUp(t.app, { teamName: 'Elsewhere' });
  trainingSetId = await createSetWith(t.app, team.engineer, 'dock tiles', await seabedPngs(31, 4, 64, 48));
  heldOutSetId = await createSetWith(t.app, team.engineer, 'dock held-out', await seabedPngs(32, 3, 64, 48));
  runId = await finishedRun(t.app, team.engineer, {
    name: 'Dock sweep',
    trainingSetId,
    heldOutSetId,
    patch: { width: 4, height: 4 },
    color: 'luma',
    meanBits: 0,
    bits: { from: 2, to: 4 },
    init: 'split',
    seed: 5,
  });
  const run = await request(t.app).get(url(`/runs/${runId}`)).set(bearer(team.engineer));
  codebooks = run.body.run.codebooks;
  expect(codebooks.length).toBeGreaterThanOrEqual(2);
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('proposing a codebook for release', () => {
  it('refuses a viewer with 403', async () => {
    const res = await propose(team.viewer, codebooks[0].id, { name: 'dock-luma', version: '1.0.0', note: 'Ready' });
    expect(res.status).toBe(403);
  });

  it('refuses a name that is not slug-like and a version that is neither a number nor MAJOR.MINOR.PATCH with 400', async () => {
    for (const body of [
      { name: 'Dock Luma', version: '1.0.0', note: 'x' },
      { name: 'dock--luma', version: '1.0.0', note: 'x' },
      { name: 'dock-luma', version: 'v1', note: 'x' },
      { name: 'dock-luma', version: '1.0', note: 'x' },
      { name: 'dock-luma', version: '01.0.0', note: 'x' },
      { name: 'dock-luma', version: '1.0.0', note: '' },
    ]) {
      const res = await propose(team.engineer, codebooks[0].id, body);
      expect(res.status, JSON.stringify(body)).toBe(400);
    }
  });

  it('answers 404 for a codebook of another team', async () => {
    const res = await request(t.app).post(`/api/teams/${outsider.teamId}/codebooks/${codebooks[0].id}/proposal`).set(bearer(outsider)).send({ name: 'x', version: '1', note: 'x' });
    expect(res.status).toBe(404);
  });

  it('records a proposal awaiting review, and refuses a second proposal of the same codebook with 409', async () => {
    const res = await propose(team.engineer, codebooks[0].id, { name: 'dock-luma', version: '1.0.0', note: 'Smallest table that beats JPEG here' });
    expect(res.status).toBe(201);
    releaseId = res.body.release.id;
    expect(res.body.release).toMatchObject({ state: 'proposed', name: 'dock-luma', version: '1.0.0', proposedBy: { id: team.engineer.user.id }, checksum: null });
    expect(res.body.release.thread).toEqual([expect.objectContaining({ kind: 'proposed', body: 'Smallest table that beats JPEG here' })]);
    const again = await propose(team.engineer, codebooks[0].id, { name: 'dock-luma', version: '1.0.1', note: 'again' });
    expect(again.status).toBe(409);
    expect(again.body.error.message).toMatch(/already proposed/);
  });
});

describe('reviewing a proposal', () => {
  it('refuses the proposer with 403, whether approving or returning', async () => {
    const own = await approve(team.engineer, releaseId);
    expect(own.status).toBe(403);
    expect(own.body.error.message).toMatch(/You proposed this codebook/);
    expect((await sendBack(team.engineer, releaseId, { comment: 'no' })).status).toBe(403);
  });

  it('refuses a viewer with 403', async () => {
    expect((await approve(team.viewer, releaseId)).status).toBe(403);
    expect((await sendBack(team.viewer, releaseId, { comment: 'no' })).status).toBe(403);
  });

  it('returns a proposal with a comment, refuses approving it while returned, and takes it proposed again', async () => {
    expect((await sendBack(reviewer, releaseId, {})).status).toBe(400);
    const returned = await sendBack(reviewer, releaseId, { comment: 'Bump the version: 1.0.0 went to the bench unit' });
    expect(returned.status).toBe(200);
    expect(returned.body.release).toMatchObject({ state: 'returned', reviewedBy: { id: reviewer.user.id } });
    expect((await approve(team.admin, releaseId)).status).toBe(409);
    const again = await propose(team.engineer, codebooks[0].id, { name: 'dock-luma', version: '1.1.0', note: 'Version bumped' });
    expect(again.status).toBe(201);
    expect(again.body.release).toMatchObject({ id: releaseId, state: 'proposed', version: '1.1.0', reviewedBy: null });
    expect(again.body.release.thread.map((c: { kind: string }) => c.kind)).toEqual(['proposed', 'returned', 'proposed']);
  });

  it('approves as an admin who did not propose: the release pins the checksum and held-out hash, with who and when', async () => {
    const res = await approve(team.admin, releaseId, { comment: 'Worst tiles look fine' });
    expect(res.status).toBe(200);
    const run = await request(t.app).get(url(`/runs/${runId}`)).set(bearer(team.engineer));
    expect(res.body.release).toMatchObject({
      state: 'approved',
      proposedBy: { id: team.engineer.user.id },
      reviewedBy: { id: team.admin.user.id },
      checksum: codebooks[0].checksum,
      heldOutHash: run.body.run.heldOutHash,
    });
    expect(Date.parse(res.body.release.releasedAt)).not.toBeNaN();
    expect((await approve(reviewer, releaseId)).status).toBe(409);
    expect((await propose(team.engineer, codebooks[0].id, { name: 'dock-luma', version: '2', note: 'x' })).status).toBe(409);
  });
});

describe('a released codebook is frozen', () => {
  it('refuses renaming its run with 409', async () => {
    const res = await request(t.app).patch(url(`/runs/${runId}`)).set(bearer(team.admin)).send({ name: 'Renamed' });
    expect(res.status).toBe(409);
    expect(res.body.error.message).toMatch(/dock-luma 1\.1\.0 is frozen/);
  });

  it('refuses deleting its run with 409 and keeps the run, the codebook and its evaluation', async () => {
    const res = await request(t.app).delete(url(`/runs/${runId}`)).set(bearer(team.admin));
    expect(res.status).toBe(409);
    expect(res.body.error.details.reason).toBe('released');
    expect((await request(t.app).get(url(`/runs/${runId}`)).set(bearer(team.admin))).status).toBe(200);
    expect((await request(t.app).get(url(`/codebooks/${codebooks[0].id}`)).set(bearer(team.admin))).status).toBe(200);
    const evaluations = await request(t.app).get(url(`/codebooks/${codebooks[0].id}/evaluations`)).set(bearer(team.admin));
    expect(evaluations.body.evaluations).toHaveLength(1);
  });

  it('refuses evaluating it again with 409', async () => {
    const res = await request(t.app).post(url(`/codebooks/${codebooks[0].id}/evaluate`)).set(bearer(team.admin)).send({ heldOutSetId });
    expect(res.status).toBe(409);
    expect(await t.db.knex('jobs').where({ codebook_id: codebooks[0].id }).count({ n: '*' }).first()).toEqual({ n: 0 });
  });

  it('cannot be deleted even underneath the services: the database refuses the row', async () => {
    await expect(t.db.knex('codebooks').where({ id: codebooks[0].id }).delete()).rejects.toMatchObject({ code: 'ER_ROW_IS_REFERENCED_2' });
    await expect(t.db.knex('evaluations').where({ codebook_id: codebooks[0].id }).delete()).rejects.toMatchObject({ code: 'ER_ROW_IS_REFERENCED_2' });
  });
});

async function waitForJob(jobId: number): Promise<{ state: string; error: string | null }> {
  for (;;) {
    const job = await t.db.knex('jobs').where({ id: jobId }).first();
    if (['succeeded', 'failed', 'cancelled'].includes(job.state)) return job;
    await new Promise((r) => setTimeout(r, 200));
  }
}

describe('images a release was measured on', () => {
  it('refuses deleting an image or its set that an imported release was evaluated on with 409', async () => {
    // An imported codebook measured on a set no run uses: only the release holds those images.
    const exported = await request(t.app).get(url(`/codebooks/${codebooks[1].id}/export`)).set(bearer(team.engineer));
    const imported = await request(t.app).post(url('/codebooks/import?name=Dock%20copy')).set(bearer(team.engineer)).send(JSON.parse(exported.text));
    expect(imported.status).toBe(201);
    const setId = await createSetWith(t.app, team.engineer, 'quay held-out', await seabedPngs(33, 2, 64, 48));
    const queued = await request(t.app).post(url(`/codebooks/${imported.body.codebook.id}/evaluate`)).set(bearer(team.engineer)).send({ heldOutSetId: setId });
    expect(queued.status).toBe(202);
    expect((await waitForJob(queued.body.job.id)).state).toBe('succeeded');
    const proposed = await propose(team.engineer, imported.body.codebook.id, { name: 'quay-copy', version: '1', note: 'Imported copy' });
    expect(proposed.status).toBe(201);
    expect((await approve(reviewer, proposed.body.release.id)).status).toBe(200);

    const images = (await request(t.app).get(url(`/image-sets/${setId}/images`)).set(bearer(team.admin))).body.images as { id: number }[];
    const image = await request(t.app).delete(url(`/images/${images[0].id}`)).set(bearer(team.admin));
    expect(image.status).toBe(409);
    expect(image.body.error.message).toMatch(/quay-copy 1/);
    const set = await request(t.app).delete(url(`/image-sets/${setId}`)).set(bearer(team.admin));
    expect(set.status).toBe(409);
    expect(set.body.error.details.reason).toBe('released');
    expect((await request(t.app).get(url(`/image-sets/${setId}/images`)).set(bearer(team.admin))).body.images).toHaveLength(2);
  });
});

describe('release names and versions', () => {
  it('refuses a name and version the team already has with 409, and takes another version', async () => {
    const clash = await propose(reviewer, codebooks[1].id, { name: 'dock-luma', version: '1.1.0', note: 'Larger table' });
    expect(clash.status).toBe(409);
    expect(clash.body.error.message).toMatch(/already has a release named dock-luma 1\.1\.0/);
    const ok = await propose(reviewer, codebooks[1].id, { name: 'dock-luma', version: '1.2.0', note: 'Larger table' });
    expect(ok.status).toBe(201);
  });

  it('lets another team use the same name and version', async () => {
    // The uniqueness is per team: the index is (team_id, name, version).
    const row = await t.db.knex('releases').where({ id: releaseId }).first();
    expect(row.team_id).toBe(team.teamId);
    const other = await t.db.knex('releases').where({ name: 'dock-luma', version: '1.1.0' }).whereNot({ team_id: team.teamId });
    expect(other).toEqual([]);
  });
});

describe('release report', () => {
  it('gives every section from the frozen codebook and its evaluation', async () => {
    const res = await request(t.app).get(url(`/releases/${releaseId}/report`)).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    const report = res.body;
    expect(report.release).toMatchObject({ id: releaseId, state: 'approved' });
    expect(report.codebook).toMatchObject({ id: codebooks[0].id, checksum: codebooks[0].checksum });
    // Training-data hash: the held-out hash rule (SHA-256 of the sorted image digests joined by "\n") over the training set.
    const images = await request(t.app).get(url(`/image-sets/${trainingSetId}/images`)).set(bearer(team.viewer));
    const shas = (images.body.images as { sha256: string }[]).map((i) => i.sha256).sort();
    expect(report.hashes.trainingData).toBe(createHash('sha256').update(shas.join('\n')).digest('hex'));
    expect(report.hashes).toMatchObject({ trainingImages: 4, heldOutImages: 3, heldOut: report.release.heldOutHash });
    expect(report.images).toHaveLength(3);
    expect(report.curve.points.map((p: { codebookId: number }) => p.codebookId)).toContain(codebooks[0].id);
    expect(report.curve.bd.againstBaselines.map((b: { codec: string }) => b.codec)).toEqual(['jpeg', 'webp', 'avif']);
    // A plain codebook's firmware table is K × d bytes of uint8 (K codewords of d = 4 × 4 luma components).
    const detail = (await request(t.app).get(url(`/codebooks/${codebooks[0].id}`)).set(bearer(team.viewer))).body.codebook;
    expect(detail.dimension).toBe(16);
    expect(report.decoderCost).toMatchObject({ tableType: 'uint8', tableBytes: detail.size * 16 });
    // The same rounding measurement as the codebook page's, on the same held-out images.
    const rounding = (await request(t.app).get(url(`/codebooks/${codebooks[0].id}/firmware/rounding`)).set(bearer(team.viewer))).body;
    expect(rounding.images).toBe(report.worstTiles.imagesMeasured);
    expect(report.decoderCost).toEqual({
      tableType: rounding.tableType, fractionBits: rounding.fractionBits, saturated: rounding.saturated, tableBytes: rounding.tableBytes,
      rounding: { psnrFloat: rounding.psnrFloat, psnrFixed: rounding.psnrFixed, costDb: rounding.costDb, differing: rounding.differing },
    });
    expect(report.checksums.codewords).toBe(codebooks[0].checksum);
    // Channel robustness: the codebook page's curve at its defaults, on the run's held-out images. The expected PSNR
    // (closed form, Zeger & Gersho 1990) can only fall as the bit-error rate rises; the engine's own tests check it
    // against the simulation.
    const channel = (await request(t.app).get(url(`/codebooks/${codebooks[0].id}/channel`)).set(bearer(team.viewer))).body;
    expect(report.channel.note).toBeNull();
    expect(report.channel.curve).toEqual(channel);
    const expected = (report.channel.curve.points as { expectedMse: number }[]).map((p) => p.expectedMse);
    for (let i = 1; i < expected.length; i++) expect(expected[i]).toBeGreaterThanOrEqual(expected[i - 1]);
    expect(report.checksums.firmwareFiles.length).toBeGreaterThan(0);
    for (const f of report.checksums.firmwareFiles) expect(f.sha256).toMatch(/^[0-9a-f]{64}$/);
  });

  it('lists the worst tiles worst first, each no better than its whole image', async () => {
    const report = (await request(t.app).get(url(`/releases/${releaseId}/report`)).set(bearer(team.viewer))).body;
    const tiles = report.worstTiles.tiles as { imageId: number; mse: number; psnr: number | null }[];
    expect(tiles.length).toBeGreaterThan(0);
    for (let i = 1; i < tiles.length; i += 1) expect(tiles[i - 1].mse).toBeGreaterThanOrEqual(tiles[i].mse);
    // An image's MSE is the area-weighted mean of its tiles' MSE, so its worst tile's MSE is at least the image's.
    const imageMse = new Map((report.images as { imageId: number; mse: number }[]).map((m) => [m.imageId, m.mse]));
    expect(tiles[0].mse).toBeGreaterThanOrEqual(Math.max(...imageMse.values()) - 1e-9);
  });

  it('refuses the report of a proposal not yet approved with 409', async () => {
    const pending = (await request(t.app).get(url('/releases')).set(bearer(team.viewer))).body.releases.find((r: { state: string }) => r.state === 'proposed');
    expect((await request(t.app).get(url(`/releases/${pending.id}/report`)).set(bearer(team.viewer))).status).toBe(409);
  });
});

describe('activity log', () => {
  it('holds every review step with its actor, newest first, readable by a viewer', async () => {
    const res = await activity(team.viewer, `targetType=release&targetId=${releaseId}`);
    expect(res.status).toBe(200);
    expect(res.body.entries.map((e: { action: string }) => e.action)).toEqual(['release.approved', 'release.proposed', 'release.returned', 'release.proposed']);
    expect(res.body.entries.map((e: { actor: { id: number } }) => e.actor.id)).toEqual([team.admin.user.id, team.engineer.user.id, reviewer.user.id, team.engineer.user.id]);
  });

  it('filters by person and by action', async () => {
    const byReviewer = await activity(team.viewer, `actor=${reviewer.user.id}`);
    expect(byReviewer.body.entries.length).toBeGreaterThan(0);
    expect(new Set(byReviewer.body.entries.map((e: { actor: { id: number } }) => e.actor.id))).toEqual(new Set([reviewer.user.id]));
    const runs = await activity(team.viewer, 'action=run.created');
    expect(runs.body.entries).toEqual([expect.objectContaining({ action: 'run.created', targetType: 'run', targetId: String(runId) })]);
  });

  it('pages with before, without overlap, until nextBefore is null', async () => {
    const seen: number[] = [];
    let before: number | null = null;
    for (let i = 0; i < 100; i += 1) {
      const page = await activity(team.viewer, `limit=3${before ? `&before=${before}` : ''}`);
      expect(page.status).toBe(200);
      seen.push(...page.body.entries.map((e: { id: number }) => e.id));
      before = page.body.nextBefore;
      if (before === null) break;
    }
    expect(seen).toEqual([...seen].sort((a, b) => b - a));
    expect(new Set(seen).size).toBe(seen.length);
    const all = await t.db.knex('audit_log').where({ team_id: team.teamId }).count({ n: '*' }).first();
    expect(seen.length).toBe(Number(all!.n));
  });

  it('refuses an unknown action with 400 and another team with 404', async () => {
    expect((await activity(team.viewer, 'action=release.deleted')).status).toBe(400);
    expect((await request(t.app).get(url('/activity')).set(bearer(outsider))).status).toBe(404);
  });
});
