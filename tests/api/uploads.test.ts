import { existsSync, readdirSync } from 'node:fs';
import path from 'node:path';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
import { corruptPng, declaredSizePng, makeImage, noise } from '../unit/storage/support/images';
import { writeZip } from '../unit/storage/support/zip-writer';

const MiB = 1024 * 1024;

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let dataDir: string;

beforeAll(async () => {
  // Small limits, so each one can be crossed with a few megabytes.
  t = await createTestApp({
    UPLOAD_MAX_BYTES: String(4 * MiB),
    UPLOAD_MAX_FILES: '5',
    UPLOAD_MAX_REQUEST_BYTES: String(12 * MiB),
    IMAGE_MAX_PIXELS: '4000000',
    ZIP_MAX_ENTRIES: '20',
    ZIP_MAX_TOTAL_BYTES: String(8 * MiB),
  });
  team = await teamWithRoles(t, 'Upload Team');
  dataDir = t.composition.config.dataDir;
});
afterAll(async () => {
  await t?.close();
});

let setCounter = 0;
async function newSet(): Promise<number> {
  const res = await request(t.app)
    .post(`/api/teams/${team.teamId}/image-sets`)
    .set(bearer(team.engineer))
    .send({ name: `Seabed ${++setCounter}` });
  expect(res.status).toBe(201);
  return res.body.imageSet.id as number;
}

function upload(setId: number, files: [Buffer, string][]) {
  let req = request(t.app).post(`/api/teams/${team.teamId}/image-sets/${setId}/images`).set(bearer(team.engineer));
  for (const [data, name] of files) req = req.attach('files', data, name);
  return req;
}

function objectFiles(): string[] {
  const root = path.join(dataDir, 'objects');
  if (!existsSync(root)) return [];
  return readdirSync(root).flatMap((d) => readdirSync(path.join(root, d)).map((f) => path.join(d, f)));
}

const rowsOf = (setId: number) => t.db.knex('images').where({ set_id: setId }).orderBy('id');

describe('image uploads', () => {
  it('keeps the valid image of a mixed upload and names the corrupt PNG and the renamed text file', async () => {
    const setId = await newSet();
    const good = await makeImage('png', { seed: 101, width: 40, height: 24 });
    const res = await upload(setId, [
      [await corruptPng(102), 'broken.png'],
      [Buffer.from('depth log, not a picture\n'), 'notes.png'],
      [good, 'reef-01.png'],
    ]);
    expect(res.status).toBe(201);
    expect(res.body.images).toHaveLength(1);
    // Width, height and format as sharp (libvips, the reference decoder) reads the same bytes.
    const meta = await sharp(good).metadata();
    expect(res.body.images[0]).toMatchObject({
      fileName: 'reef-01.png',
      width: meta.width,
      height: meta.height,
      format: 'png',
      channels: meta.channels,
      bytes: good.length,
      role: 'training',
      setId,
    });
    expect(res.body.rejected).toEqual([
      { file: 'broken.png', message: expect.stringMatching(/^broken\.png: the PNG data is damaged or truncated/) },
      { file: 'notes.png', message: expect.stringMatching(/^notes\.png: not an image in a format the studio reads/) },
    ]);
    expect(res.body.duplicates).toEqual([]);
    expect(await rowsOf(setId)).toHaveLength(1);
  });

  it('refuses a truncated JPEG with the JSON error shape and stores nothing', async () => {
    const setId = await newSet();
    const jpeg = await makeImage('jpeg', { seed: 103, width: 64, height: 64 });
    const before = objectFiles();
    const res = await upload(setId, [[jpeg.subarray(0, Math.floor(jpeg.length * 0.6)), 'cut.jpg']]);
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('bad_request');
    expect(res.body.error.details).toEqual([{ file: 'cut.jpg', message: expect.stringMatching(/^cut\.jpg: the JPEG data is damaged or truncated/) }]);
    expect(await rowsOf(setId)).toHaveLength(0);
    expect(objectFiles()).toEqual(before);
  });

  it('refuses a zip entry that climbs out of the archive, naming it, and keeps the good entries', async () => {
    const setId = await newSet();
    const archive = writeZip([
      { name: 'reef/a.png', data: await makeImage('png', { seed: 104 }) },
      { name: '../../evil.png', data: await makeImage('png', { seed: 105 }) },
      { name: 'b.jpg', data: await makeImage('jpeg', { seed: 106 }) },
    ]);
    // Named .bin on purpose: archives are recognised by their bytes.
    const res = await upload(setId, [[archive, 'survey.bin']]);
    expect(res.status).toBe(201);
    expect(res.body.images.map((i: { fileName: string }) => i.fileName)).toEqual(['reef/a.png', 'b.jpg']);
    expect(res.body.rejected).toEqual([
      { file: 'survey.bin/../../evil.png', message: expect.stringContaining('"../../evil.png" climbs out of the archive') },
    ]);
    expect(existsSync(path.join(dataDir, '..', 'evil.png'))).toBe(false);
    expect(existsSync(path.join(dataDir, 'evil.png'))).toBe(false);
  });

  it('reports an archive holding only folders and dot files as holding no files', async () => {
    const setId = await newSet();
    const archive = writeZip([{ name: 'reef/' }, { name: '__MACOSX/._a.png', data: Buffer.from('fork') }, { name: '.DS_Store', data: Buffer.from('x') }]);
    const res = await upload(setId, [[archive, 'empty.zip']]);
    expect(res.status).toBe(400);
    expect(res.body.error.details).toEqual([{ file: 'empty.zip', message: 'empty.zip: the archive holds no files' }]);
  });

  it('refuses a tiny PNG that declares 30000×30000 pixels by the pixel limit', async () => {
    const setId = await newSet();
    const bomb = declaredSizePng(30000, 30000);
    expect(bomb.length).toBeLessThan(1024);
    const res = await upload(setId, [[bomb, 'abyss.png']]);
    expect(res.status).toBe(400);
    expect(res.body.error.details).toEqual([
      { file: 'abyss.png', message: 'abyss.png: 30000×30000 is 900000000 pixels, more than the limit of 4000000 pixels per image' },
    ]);
  });

  it('refuses a zip that would unpack beyond the limit, whatever its compressed size', async () => {
    const setId = await newSet();
    const archive = writeZip([
      { name: 'zeros-1.png', data: Buffer.alloc(5 * MiB) },
      { name: 'zeros-2.png', data: Buffer.alloc(5 * MiB) },
    ]);
    expect(archive.length).toBeLessThan(64 * 1024);
    const res = await upload(setId, [[archive, 'bomb.zip']]);
    expect(res.status).toBe(400);
    expect(res.body.error.details).toEqual([{ file: 'bomb.zip', message: expect.stringMatching(/^bomb\.zip: unpacks to 10 MiB, more than the 8 MiB/) }]);
  });

  it('stores the same image once: one object file, one row, the repeats reported as duplicates', async () => {
    const setId = await newSet();
    const png = await makeImage('png', { seed: 107 });
    const first = await upload(setId, [
      [png, 'tile.png'],
      [png, 'tile-copy.png'],
    ]);
    expect(first.status).toBe(201);
    expect(first.body.images).toHaveLength(1);
    const id = first.body.images[0].id;
    expect(first.body.duplicates).toEqual([{ file: 'tile-copy.png', imageId: id }]);

    const again = await upload(setId, [[png, 'tile-again.png']]);
    expect(again.status).toBe(201);
    expect(again.body).toEqual({ images: [], rejected: [], duplicates: [{ file: 'tile-again.png', imageId: id }] });

    const rows = await rowsOf(setId);
    expect(rows).toHaveLength(1);
    expect(objectFiles().filter((f) => f.endsWith(rows[0].sha256))).toHaveLength(1);

    // Another set gets its own row for the same bytes, still backed by the one object.
    const otherSet = await newSet();
    const other = await upload(otherSet, [[png, 'tile.png']]);
    expect(other.body.images).toHaveLength(1);
    expect(objectFiles().filter((f) => f.endsWith(rows[0].sha256))).toHaveLength(1);
  });

  it('accepts PNG, JPEG, WebP, TIFF, AVIF and GIF and records each format', async () => {
    const setId = await newSet();
    const formats = ['png', 'jpeg', 'webp', 'tiff', 'avif'] as const;
    const files: [Buffer, string][] = [];
    for (const [i, f] of formats.entries()) files.push([await makeImage(f, { seed: 200 + i }), `tile.${f}`]);
    const res = await upload(setId, files);
    expect(res.status).toBe(201);
    expect(res.body.images.map((i: { format: string }) => i.format)).toEqual([...formats]);
    const gif = await upload(setId, [[await makeImage('gif', { seed: 210 }), 'tile.gif']]);
    expect(gif.body.images[0]).toMatchObject({ format: 'gif', width: 48, height: 32 });
  });

  it('keeps a UTF-8 file name and drops any client folder path from it', async () => {
    const setId = await newSet();
    const res = await upload(setId, [
      [await makeImage('png', { seed: 108 }), 'Récif nord — 01.png'],
      [await makeImage('png', { seed: 112 }), 'C:\\dives\\2026\\tile-b.png'],
    ]);
    expect(res.status).toBe(201);
    expect(res.body.images.map((i: { fileName: string }) => i.fileName)).toEqual(['Récif nord — 01.png', 'tile-b.png']);
  });

  it('answers 413 with the JSON error shape for too many files and for too large a file, storing nothing', async () => {
    const setId = await newSet();
    const many: [Buffer, string][] = [];
    for (let i = 0; i < 6; i += 1) many.push([await makeImage('png', { seed: 300 + i, width: 8, height: 8 }), `t${i}.png`]);
    const tooMany = await upload(setId, many);
    expect(tooMany.status).toBe(413);
    expect(tooMany.body.error).toMatchObject({ code: 'payload_too_large', message: 'At most 5 files per upload; send the rest in another' });

    const big = noise(1024, 1700, 9); // 5.0 MiB of raw bytes, over the 4 MiB limit
    const tooLarge = await upload(setId, [[big, 'huge.raw']]);
    expect(tooLarge.status).toBe(413);
    expect(tooLarge.body.error).toMatchObject({ code: 'payload_too_large', message: 'A file is larger than the 4 MiB limit per file' });
    expect(await rowsOf(setId)).toHaveLength(0);
  });

  it('refuses a request larger than the per-request limit before reading it, storing nothing', async () => {
    const setId = await newSet();
    // Four files under the 4 MiB per-file limit, 13.6 MiB together: over the 12 MiB request limit.
    const parts: [Buffer, string][] = [0, 1, 2, 3].map((i) => [noise(1024, 1150, 40 + i), `part-${i}.raw`]);
    const res = await upload(setId, parts);
    expect(res.status).toBe(413);
    expect(res.body.error).toMatchObject({ code: 'payload_too_large', message: 'An upload may carry at most 12 MiB; send the files in several requests' });
    expect(await rowsOf(setId)).toHaveLength(0);
  });

  it('answers 415 for a body that is not multipart and 400 for files in another field', async () => {
    const setId = await newSet();
    const json = await request(t.app)
      .post(`/api/teams/${team.teamId}/image-sets/${setId}/images`)
      .set(bearer(team.engineer))
      .send({ files: [] });
    expect(json.status).toBe(415);
    expect(json.body.error.code).toBe('unsupported_media_type');

    const wrongField = await request(t.app)
      .post(`/api/teams/${team.teamId}/image-sets/${setId}/images`)
      .set(bearer(team.engineer))
      .attach('images', await makeImage('png', { seed: 109 }), 'a.png');
    expect(wrongField.status).toBe(400);
    expect(wrongField.body.error.message).toBe('Files go in the multipart field "files", not "images"');

    const none = await request(t.app)
      .post(`/api/teams/${team.teamId}/image-sets/${setId}/images`)
      .set(bearer(team.engineer))
      .field('note', 'no files here');
    expect(none.status).toBe(400);
    expect(none.body.error.message).toMatch(/No files/);
  });

  it('writes a thumbnail inside 160×160 and an audit entry for every stored upload', async () => {
    const setId = await newSet();
    const res = await upload(setId, [[await makeImage('jpeg', { seed: 110, width: 400, height: 300 }), 'wide.jpg']]);
    expect(res.status).toBe(201);
    const image = res.body.images[0];
    const thumb = await request(t.app).get(`/api/teams/${team.teamId}/images/${image.id}/thumbnail`).set(bearer(team.viewer));
    expect(thumb.status).toBe(200);
    expect(thumb.headers['content-type']).toBe('image/webp');
    const meta = await sharp(thumb.body as Buffer).metadata();
    expect([meta.format, meta.width, meta.height]).toEqual(['webp', 160, 120]);

    const audit = await t.db.knex('audit_log').where({ team_id: team.teamId, action: 'images.uploaded', target_id: String(setId) });
    expect(audit).toHaveLength(1);
    const details = typeof audit[0].details === 'string' ? JSON.parse(audit[0].details) : audit[0].details;
    expect(details.imageIds).toEqual([image.id]);
    expect(audit[0].actor_user_id).toBe(team.engineer.user.id);
  });

  it('refuses an upload into a set of another team with 404 and a viewer with 403', async () => {
    const setId = await newSet();
    const png = await makeImage('png', { seed: 111 });
    const viewer = await request(t.app)
      .post(`/api/teams/${team.teamId}/image-sets/${setId}/images`)
      .set(bearer(team.viewer))
      .attach('files', png, 'a.png');
    expect(viewer.status).toBe(403);
    const other = await teamWithRoles(t, 'Other Upload Team');
    const outsider = await request(t.app)
      .post(`/api/teams/${other.teamId}/image-sets/${setId}/images`)
      .set(bearer(other.engineer))
      .attach('files', png, 'a.png');
    expect(outsider.status).toBe(404);
    expect(await rowsOf(setId)).toHaveLength(0);
  });
});
