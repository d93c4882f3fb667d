import { createHash } from 'node:crypto';
import { existsSync, rmSync } from 'node:fs';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
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

let counter = 0;
const imagePath = (id: number, teamId = a.teamId) => `/api/teams/${teamId}/images/${id}`;

async function uploadOne(data: Buffer, name: string, setId?: number) {
  if (setId === undefined) {
    const set = await request(t.app).post(`/api/teams/${a.teamId}/image-sets`).set(bearer(a.engineer)).send({ name: `Images ${++counter}` });
    setId = set.body.imageSet.id as number;
  }
  const res = await request(t.app).post(`/api/teams/${a.teamId}/image-sets/${setId}/images`).set(bearer(a.engineer)).attach('files', data, name);
  expect(res.status).toBe(201);
  return { setId, image: res.body.images[0] as { id: number; sha256: string; role: string } };
}

/** supertest buffers image/* bodies only when asked to. */
const binary = (req: request.Test) =>
  req.buffer(true).parse((res, done) => {
    const chunks: Buffer[] = [];
    res.on('data', (c: Buffer) => chunks.push(c));
    res.on('end', () => done(null, Buffer.concat(chunks)));
  });

describe('images', () => {
  it('returns metadata whose sha256 is the SHA-256 of the uploaded bytes', async () => {
    const png = await makeImage('png', { seed: 1, width: 30, height: 20, channels: 4 });
    const { setId, image } = await uploadOne(png, 'alpha.png');
    const res = await request(t.app).get(imagePath(image.id)).set(bearer(a.viewer));
    expect(res.status).toBe(200);
    // node:crypto's SHA-256 (FIPS 180-4) over the bytes sent, independent of the store.
    expect(res.body.image).toMatchObject({
      id: image.id,
      setId,
      fileName: 'alpha.png',
      sha256: createHash('sha256').update(png).digest('hex'),
      width: 30,
      height: 20,
      channels: 4,
      format: 'png',
      bytes: png.length,
    });
  });

  it('serves the original bytes with their media type, ranges and a strong ETag', async () => {
    const jpeg = await makeImage('jpeg', { seed: 2 });
    const { image } = await uploadOne(jpeg, 'dive.jpg');
    const res = await binary(request(t.app).get(`${imagePath(image.id)}/original`).set(bearer(a.viewer)));
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toBe('image/jpeg');
    expect(res.headers.etag).toBe(`"${image.sha256}"`);
    expect(res.headers['cache-control']).toMatch(/^private/);
    expect(Buffer.compare(res.body as Buffer, jpeg)).toBe(0);

    const again = await request(t.app).get(`${imagePath(image.id)}/original`).set(bearer(a.viewer)).set('If-None-Match', `"${image.sha256}"`);
    expect(again.status).toBe(304);
    // JPEG files open with the SOI marker FF D8 (ITU-T T.81, B.2.1).
    const head = await binary(request(t.app).get(`${imagePath(image.id)}/original`).set(bearer(a.viewer)).set('Range', 'bytes=0-1'));
    expect(head.status).toBe(206);
    expect([...(head.body as Buffer)]).toEqual([0xff, 0xd8]);
  });

  it('serves a WebP thumbnail with ETag = sha256, 304 when it matches, and remakes a lost one', async () => {
    const { image } = await uploadOne(await makeImage('png', { seed: 3, width: 200, height: 400 }), 'tall.png');
    const res = await binary(request(t.app).get(`${imagePath(image.id)}/thumbnail`).set(bearer(a.viewer)));
    expect(res.status).toBe(200);
    expect(res.headers).toMatchObject({ 'content-type': 'image/webp', etag: `"${image.sha256}"` });
    expect(res.headers['cache-control']).toMatch(/^private/);
    const meta = await sharp(res.body as Buffer).metadata();
    expect([meta.format, meta.width, meta.height]).toEqual(['webp', 80, 160]);

    const cached = await request(t.app).get(`${imagePath(image.id)}/thumbnail`).set(bearer(a.viewer)).set('If-None-Match', `"${image.sha256}"`);
    expect(cached.status).toBe(304);

    rmSync(t.composition.contentStore.thumbnailPath(image.sha256));
    const remade = await binary(request(t.app).get(`${imagePath(image.id)}/thumbnail`).set(bearer(a.viewer)));
    expect(remade.status).toBe(200);
    expect((await sharp(remade.body as Buffer).metadata()).height).toBe(160);
    expect(existsSync(t.composition.contentStore.thumbnailPath(image.sha256))).toBe(true);
  });

  it('changes a role for an engineer, refuses a viewer with 403 and a bad role with 400', async () => {
    const { image } = await uploadOne(await makeImage('png', { seed: 4 }), 'r.png');
    const viewer = await request(t.app).patch(imagePath(image.id)).set(bearer(a.viewer)).send({ role: 'held-out' });
    expect(viewer.status).toBe(403);
    const bad = await request(t.app).patch(imagePath(image.id)).set(bearer(a.engineer)).send({ role: 'validation' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.details[0].path).toBe('role');
    const ok = await request(t.app).patch(imagePath(image.id)).set(bearer(a.engineer)).send({ role: 'held-out' });
    expect(ok.status).toBe(200);
    expect(ok.body.image.role).toBe('held-out');
    expect((await t.db.knex('images').where({ id: image.id }).first()).role).toBe('held-out');
  });

  it('lists a set by role', async () => {
    const { setId, image } = await uploadOne(await makeImage('png', { seed: 5 }), 'one.png');
    const second = await uploadOne(await makeImage('png', { seed: 6 }), 'two.png', setId);
    await request(t.app).patch(imagePath(second.image.id)).set(bearer(a.engineer)).send({ role: 'held-out' }).expect(200);
    const list = (role: string) => request(t.app).get(`/api/teams/${a.teamId}/image-sets/${setId}/images?role=${role}`).set(bearer(a.viewer));
    expect((await list('training')).body.images.map((i: { id: number }) => i.id)).toEqual([image.id]);
    expect((await list('held-out')).body.images.map((i: { id: number }) => i.id)).toEqual([second.image.id]);
    expect((await list('test')).status).toBe(400);
  });

  it('lets only an admin delete an image and keeps the stored object while another row uses it', async () => {
    const png = await makeImage('png', { seed: 7 });
    const first = await uploadOne(png, 'shared.png');
    const second = await uploadOne(png, 'shared-again.png');
    expect((await request(t.app).delete(imagePath(first.image.id)).set(bearer(a.engineer))).status).toBe(403);
    expect((await request(t.app).delete(imagePath(first.image.id)).set(bearer(a.admin))).status).toBe(204);
    expect(await t.db.knex('images').where({ id: first.image.id })).toHaveLength(0);
    expect(await t.db.knex('audit_log').where({ action: 'image.deleted', target_id: String(first.image.id) })).toHaveLength(1);
    expect(existsSync(t.composition.contentStore.path(first.image.sha256))).toBe(true);
    const still = await binary(request(t.app).get(`${imagePath(second.image.id)}/original`).set(bearer(a.viewer)));
    expect(Buffer.compare(still.body as Buffer, png)).toBe(0);
    expect((await request(t.app).get(imagePath(first.image.id)).set(bearer(a.admin))).status).toBe(404);
  });

  it("answers 404 to another team for an image, its thumbnail and its original, and changes nothing", async () => {
    const { image } = await uploadOne(await makeImage('png', { seed: 8 }), 'private.png');
    const probes = [
      ['get', imagePath(image.id, b.teamId)],
      ['get', `${imagePath(image.id, b.teamId)}/thumbnail`],
      ['get', `${imagePath(image.id, b.teamId)}/original`],
      ['patch', imagePath(image.id, b.teamId)],
      ['delete', imagePath(image.id, b.teamId)],
      ['get', `${imagePath(image.id)}/original`],
    ] as const;
    for (const [method, path] of probes) {
      const res = await request(t.app)[method](path).set(bearer(b.admin)).send(method === 'patch' ? { role: 'held-out' } : undefined);
      expect(res.status, `${method} ${path}`).toBe(404);
      expect(res.body.error.code).toBe('not_found');
    }
    expect(await t.db.knex('images').where({ id: image.id }).first()).toMatchObject({ role: 'training', team_id: a.teamId });
  });

  it('answers 401 without a session', async () => {
    const { image } = await uploadOne(await makeImage('png', { seed: 9 }), 'anon.png');
    expect((await request(t.app).get(`${imagePath(image.id)}/thumbnail`)).status).toBe(401);
  });
});
