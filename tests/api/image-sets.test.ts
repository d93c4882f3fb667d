import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { makeImage } from '../unit/storage/support/images';

let t: TestApp;
let a: Awaited<ReturnType<typeof teamWithRoles>>;
let b: Awaited<ReturnType<typeof teamWithRoles>>;

beforeAll(async () => {
  t = await createTestApp();
  a = await teamWithRoles(t, 'Team A');
  b = await teamWithRoles(t, 'Team B');
});
afterAll(async () => {
  await t?.close();
});

const base = (teamId: number) => `/api/teams/${teamId}/image-sets`;
let counter = 0;

async function createSet(who: Session = a.engineer, name = `Reef survey ${++counter}`) {
  const res = await request(t.app).post(base(who.teamId)).set(bearer(who)).send({ name, description: 'Tiles from the north reef' });
  expect(res.status).toBe(201);
  return res.body.imageSet as { id: number; name: string };
}

/** A set holding n distinct small PNGs, uploaded in one request. */
async function setWithImages(n: number): Promise<{ setId: number; imageIds: number[] }> {
  const set = await createSet();
  let req = request(t.app).post(`${base(a.teamId)}/${set.id}/images`).set(bearer(a.engineer));
  for (let i = 0; i < n; i += 1) req = req.attach('files', await makeImage('png', { seed: 1000 + counter * 100 + i, width: 8, height: 8 }), `tile-${i}.png`);
  const res = await req;
  expect(res.status).toBe(201);
  return { setId: set.id, imageIds: res.body.images.map((i: { id: number }) => i.id) };
}

const split = (setId: number, body: object, who: Session = a.engineer) =>
  request(t.app).post(`${base(a.teamId)}/${setId}/split`).set(bearer(who)).send(body);

const heldOutIds = (images: { id: number; role: string }[]) => images.filter((i) => i.role === 'held-out').map((i) => i.id);

describe('image sets', () => {
  it('creates, reads, lists with counts by role, and renames a set', async () => {
    const { setId, imageIds } = await setWithImages(3);
    await request(t.app).patch(`/api/teams/${a.teamId}/images/${imageIds[0]}`).set(bearer(a.engineer)).send({ role: 'held-out' }).expect(200);

    const got = await request(t.app).get(`${base(a.teamId)}/${setId}`).set(bearer(a.viewer));
    expect(got.status).toBe(200);
    expect(got.body.imageSet).toMatchObject({ id: setId, description: 'Tiles from the north reef', createdBy: a.engineer.user.id, counts: { total: 3, training: 2, heldOut: 1 } });

    const list = await request(t.app).get(base(a.teamId)).set(bearer(a.viewer));
    expect(list.status).toBe(200);
    expect(list.body.imageSets.find((s: { id: number }) => s.id === setId).counts).toEqual({ total: 3, training: 2, heldOut: 1 });

    const renamed = await request(t.app).patch(`${base(a.teamId)}/${setId}`).set(bearer(a.engineer)).send({ name: 'South reef', description: null });
    expect(renamed.status).toBe(200);
    expect(renamed.body.imageSet).toMatchObject({ name: 'South reef', description: null });

    const audit = await t.db.knex('audit_log').where({ action: 'image_set.created', target_id: String(setId) });
    expect(audit).toHaveLength(1);
  });

  it('refuses a second set of the same name in a team with 409, but allows it in another team', async () => {
    await createSet(a.engineer, 'Kelp forest');
    const again = await request(t.app).post(base(a.teamId)).set(bearer(a.engineer)).send({ name: 'Kelp forest' });
    expect(again.status).toBe(409);
    expect(again.body.error).toEqual({ code: 'conflict', message: 'The team already has an image set named "Kelp forest"', details: { field: 'name' } });
    await createSet(b.engineer, 'Kelp forest');
  });

  it('refuses invalid bodies with 400 and the field named', async () => {
    const empty = await request(t.app).post(base(a.teamId)).set(bearer(a.engineer)).send({ name: '  ' });
    expect(empty.status).toBe(400);
    expect(empty.body.error.details[0].path).toBe('name');
    const extra = await request(t.app).post(base(a.teamId)).set(bearer(a.engineer)).send({ name: 'x', owner: 1 });
    expect(extra.status).toBe(400);
    const set = await createSet();
    const nothing = await request(t.app).patch(`${base(a.teamId)}/${set.id}`).set(bearer(a.engineer)).send({});
    expect(nothing.status).toBe(400);
  });

  it('splits deterministically for a seed, holding out round(fraction × n) images', async () => {
    const { setId, imageIds } = await setWithImages(10);
    const first = await split(setId, { heldOutFraction: 0.25, seed: 42 });
    expect(first.status).toBe(200);
    // round(0.25 × 10) = 3 (round half up; common practice for a held-out count).
    const chosen = heldOutIds(first.body.images);
    expect(chosen).toHaveLength(3);
    expect(first.body.imageSet.counts).toEqual({ total: 10, training: 7, heldOut: 3 });
    expect(first.body.images.map((i: { id: number }) => i.id)).toEqual(imageIds);

    // Scramble the roles, then split again with the same seed: the same images come back held out.
    await request(t.app).patch(`${base(a.teamId)}/${setId}`).set(bearer(a.engineer))
      .send({ assignments: imageIds.map((imageId) => ({ imageId, role: 'held-out' })) }).expect(200);
    const second = await split(setId, { heldOutFraction: 0.25, seed: 42 });
    expect(heldOutIds(second.body.images)).toEqual(chosen);

    const seeds = new Set<string>();
    for (const seed of [1, 2, 3, 4, 5]) {
      const res = await split(setId, { heldOutFraction: 0.5, seed });
      expect(heldOutIds(res.body.images)).toHaveLength(5);
      seeds.add(heldOutIds(res.body.images).join(','));
    }
    // Five seeds choosing 5 of 10 (252 ways) that all agree would mean the seed is ignored.
    expect(seeds.size).toBeGreaterThan(1);
  });

  it('refuses a split that would leave a side empty, and fractions outside (0, 1)', async () => {
    const { setId } = await setWithImages(2);
    const tooSmall = await split(setId, { heldOutFraction: 0.2, seed: 1 });
    expect(tooSmall.status).toBe(400);
    expect(tooSmall.body.error.message).toMatch(/would hold out 0; each side needs at least one image/);
    for (const heldOutFraction of [0, 1, -0.1, 1.5]) {
      const res = await split(setId, { heldOutFraction, seed: 1 });
      expect(res.status).toBe(400);
      expect(res.body.error.details[0].path).toBe('heldOutFraction');
    }
  });

  it('assigns explicit roles, and refuses the whole change when an image is not in the set', async () => {
    const { setId, imageIds } = await setWithImages(3);
    const other = await setWithImages(1);
    const ok = await request(t.app).patch(`${base(a.teamId)}/${setId}`).set(bearer(a.engineer))
      .send({ assignments: [{ imageId: imageIds[1], role: 'held-out' }] });
    expect(ok.status).toBe(200);
    expect(ok.body.imageSet.counts).toEqual({ total: 3, training: 2, heldOut: 1 });

    const bad = await request(t.app).patch(`${base(a.teamId)}/${setId}`).set(bearer(a.engineer))
      .send({ name: 'Should not stick', assignments: [{ imageId: imageIds[0], role: 'held-out' }, { imageId: other.imageIds[0], role: 'held-out' }] });
    expect(bad.status).toBe(400);
    expect(bad.body.error.message).toBe(`Images ${other.imageIds[0]} are not in this set`);
    const after = await request(t.app).get(`${base(a.teamId)}/${setId}/images?role=held-out`).set(bearer(a.viewer));
    expect(after.body.images.map((i: { id: number }) => i.id)).toEqual([imageIds[1]]);
    expect((await t.db.knex('image_sets').where({ id: setId }).first()).name).not.toBe('Should not stick');
  });

  it('lets a viewer read but answers 403 to a viewer creating, uploading, splitting or patching', async () => {
    const { setId } = await setWithImages(2);
    const v = a.viewer;
    expect((await request(t.app).get(base(a.teamId)).set(bearer(v))).status).toBe(200);
    expect((await request(t.app).get(`${base(a.teamId)}/${setId}/images`).set(bearer(v))).status).toBe(200);
    expect((await request(t.app).post(base(a.teamId)).set(bearer(v)).send({ name: 'Viewer set' })).status).toBe(403);
    const up = await request(t.app).post(`${base(a.teamId)}/${setId}/images`).set(bearer(v)).attach('files', await makeImage('png', { seed: 5 }), 'v.png');
    expect(up.status).toBe(403);
    expect((await split(setId, { heldOutFraction: 0.5, seed: 1 }, v)).status).toBe(403);
    expect((await request(t.app).patch(`${base(a.teamId)}/${setId}`).set(bearer(v)).send({ name: 'Renamed' })).status).toBe(403);
    expect(await t.db.knex('image_sets').where({ team_id: a.teamId, name: 'Viewer set' })).toHaveLength(0);
    expect(await t.db.knex('images').where({ set_id: setId })).toHaveLength(2);
  });

  it('lets only an admin delete a set, with its image rows, and writes an audit entry', async () => {
    const { setId } = await setWithImages(2);
    expect((await request(t.app).delete(`${base(a.teamId)}/${setId}`).set(bearer(a.engineer))).status).toBe(403);
    expect((await request(t.app).delete(`${base(a.teamId)}/${setId}`).set(bearer(a.viewer))).status).toBe(403);
    const res = await request(t.app).delete(`${base(a.teamId)}/${setId}`).set(bearer(a.admin));
    expect(res.status).toBe(204);
    expect(await t.db.knex('images').where({ set_id: setId })).toHaveLength(0);
    expect((await request(t.app).get(`${base(a.teamId)}/${setId}`).set(bearer(a.admin))).status).toBe(404);
    expect(await t.db.knex('audit_log').where({ action: 'image_set.deleted', target_id: String(setId) })).toHaveLength(1);
  });

  it('refuses to delete a set or an image a run uses with 409 naming the run, changing nothing', async () => {
    const { setId, imageIds } = await setWithImages(2);
    const [runId] = await t.db.knex('runs').insert({ team_id: a.teamId, name: 'Dawn dive 4-bit', config: '{}', held_out_hash: 'f'.repeat(64) });
    await t.db.knex('run_images').insert({ run_id: runId, image_id: imageIds[0], role: 'training' });

    const set = await request(t.app).delete(`${base(a.teamId)}/${setId}`).set(bearer(a.admin));
    expect(set.status).toBe(409);
    expect(set.body.error.message).toBe(`The image set cannot be deleted: image is used by run "Dawn dive 4-bit" (#${runId}); delete those runs first`);
    expect(set.body.error.details).toEqual({ reason: 'in_use', runs: [{ id: runId, name: 'Dawn dive 4-bit' }] });

    const image = await request(t.app).delete(`/api/teams/${a.teamId}/images/${imageIds[0]}`).set(bearer(a.admin));
    expect(image.status).toBe(409);
    expect(image.body.error.message).toMatch(/^The image cannot be deleted: image is used by run "Dawn dive 4-bit"/);

    expect(await t.db.knex('images').where({ set_id: setId })).toHaveLength(2);
    expect(await t.db.knex('audit_log').where({ action: 'image_set.deleted', target_id: String(setId) })).toHaveLength(0);
    // The image no run uses can still go.
    expect((await request(t.app).delete(`/api/teams/${a.teamId}/images/${imageIds[1]}`).set(bearer(a.admin))).status).toBe(204);
  });

  it('declares the foreign keys and unique keys the image data model relies on', async () => {
    const [fks] = (await t.db.knex.raw(
      `SELECT k.TABLE_NAME AS tbl, k.COLUMN_NAME AS col, r.DELETE_RULE AS rule
         FROM information_schema.KEY_COLUMN_USAGE k
         JOIN information_schema.REFERENTIAL_CONSTRAINTS r
           ON r.CONSTRAINT_SCHEMA = k.TABLE_SCHEMA AND r.CONSTRAINT_NAME = k.CONSTRAINT_NAME
        WHERE k.TABLE_SCHEMA = ? AND k.TABLE_NAME IN ('image_sets', 'images')`,
      [t.db.name],
    )) as [{ tbl: string; col: string; rule: string }[]];
    const rule = (tbl: string, col: string) => fks.find((f) => f.tbl === tbl && f.col === col)?.rule;
    expect(rule('image_sets', 'team_id')).toBe('CASCADE');
    expect(rule('image_sets', 'created_by')).toBe('SET NULL');
    expect(rule('images', 'set_id')).toBe('CASCADE');
    expect(rule('images', 'team_id')).toBe('CASCADE');
    const [uniques] = (await t.db.knex.raw(
      `SELECT TABLE_NAME AS tbl, GROUP_CONCAT(COLUMN_NAME ORDER BY SEQ_IN_INDEX) AS cols FROM information_schema.STATISTICS
        WHERE TABLE_SCHEMA = ? AND NON_UNIQUE = 0 AND INDEX_NAME <> 'PRIMARY' AND TABLE_NAME IN ('image_sets', 'images')
        GROUP BY TABLE_NAME, INDEX_NAME`,
      [t.db.name],
    )) as [{ tbl: string; cols: string }[]];
    expect([...uniques].sort((x, y) => x.cols.localeCompare(y.cols))).toEqual([
      { tbl: 'images', cols: 'set_id,sha256' },
      { tbl: 'image_sets', cols: 'team_id,name' },
    ]);
  });

  it("answers 404 to another team for a set's every route", async () => {
    const { setId } = await setWithImages(1);
    const paths = [
      ['get', `${base(b.teamId)}/${setId}`],
      ['get', `${base(b.teamId)}/${setId}/images`],
      ['patch', `${base(b.teamId)}/${setId}`],
      ['post', `${base(b.teamId)}/${setId}/split`],
      ['delete', `${base(b.teamId)}/${setId}`],
      ['get', `${base(a.teamId)}/${setId}`],
    ] as const;
    for (const [method, path] of paths) {
      const body = method === 'patch' ? { name: 'Taken over' } : method === 'post' ? { heldOutFraction: 0.5, seed: 1 } : undefined;
      const res = await request(t.app)[method](path).set(bearer(b.admin)).send(body);
      expect(res.status, `${method} ${path}`).toBe(404);
      expect(res.body.error.code).toBe('not_found');
    }
    expect(await t.db.knex('image_sets').where({ id: setId }).first()).toMatchObject({ team_id: a.teamId });
  });
});
