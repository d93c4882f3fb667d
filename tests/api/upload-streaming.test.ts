// Uploads are received to disk, not memory: each request's parts go to a scratch folder under DATA_DIR as they
// arrive, the folder is removed however the upload ends, and uploads in progress are capped in all and per user.
import { existsSync, mkdirSync, readdirSync, statSync, writeFileSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import path from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createStoreSweeper } from '../../server/services';
import { createSpool } from '../../server/storage/spool';
import { bearer, createTestApp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { openRequest, type RawRequest } from '../helpers/raw-request';
import { makeImage } from '../unit/storage/support/images';

const MiB = 1024 * 1024;
let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let other: Awaited<ReturnType<typeof teamWithRoles>>;
let server: Server;
let base: string;
let scratchRoot: string;

beforeAll(async () => {
  t = await createTestApp({
    UPLOAD_MAX_BYTES: String(8 * MiB),
    UPLOAD_MAX_CONCURRENT: '2',
    UPLOAD_MAX_CONCURRENT_PER_USER: '1',
  });
  team = await teamWithRoles(t, 'Spool Team');
  other = await teamWithRoles(t, 'Other Spool Team');
  scratchRoot = createSpool(t.composition.config.dataDir).root;
  server = await new Promise<Server>((resolve) => {
    const s = t.app.listen(0, '127.0.0.1', () => resolve(s));
  });
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});
afterAll(async () => {
  server?.closeAllConnections();
  await new Promise((r) => server?.close(r));
  await t?.close();
});

/** Waits for a condition of the server's state (not for a time): polls it, and fails if it never holds. */
async function until(condition: () => boolean, what: string): Promise<void> {
  for (let i = 0; i < 400; i += 1) {
    if (condition()) return;
    await new Promise((r) => setTimeout(r, 25));
  }
  throw new Error(`never happened: ${what}`);
}

/** The scratch folders of uploads in progress, and the files in them with their sizes. */
function scratch(): { folders: string[]; files: { name: string; bytes: number }[] } {
  const folders = existsSync(scratchRoot) ? readdirSync(scratchRoot) : [];
  const files = folders.flatMap((f) => {
    const dir = path.join(scratchRoot, f);
    return existsSync(dir) ? readdirSync(dir).map((name) => ({ name: `${f}/${name}`, bytes: statSync(path.join(dir, name)).size })) : [];
  });
  return { folders, files };
}

async function newSet(who: { teamId: number; engineer: Session }, name: string): Promise<number> {
  const res = await request(t.app).post(`/api/teams/${who.teamId}/image-sets`).set(bearer(who.engineer)).send({ name });
  expect(res.status).toBe(201);
  return res.body.imageSet.id as number;
}

const boundary = 'cw-spool-boundary';
const partHead = (name: string) => Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="files"; filename="${name}"\r\nContent-Type: image/png\r\n\r\n`);
const tail = Buffer.from(`\r\n--${boundary}--\r\n`);

interface Held {
  request: RawRequest;
  /** Sends the rest of the body and waits for the answer. */
  finish(): Promise<{ status: number; json: unknown }>;
}

/** Starts an upload of one file and sends `sendFirst` bytes of it, holding the rest until finish(). */
async function holdUpload(who: Session, teamId: number, setId: number, file: Buffer, sendFirst: number): Promise<Held> {
  const head = partHead('held.png');
  const r = openRequest(base, 'POST', `/api/teams/${teamId}/image-sets/${setId}/images`, {
    Authorization: `Bearer ${who.token}`,
    'Content-Type': `multipart/form-data; boundary=${boundary}`,
    'Content-Length': head.length + file.length + tail.length,
  });
  await r.write(head);
  await r.write(file.subarray(0, sendFirst));
  return {
    request: r,
    async finish() {
      await r.write(file.subarray(sendFirst));
      r.end(tail);
      return r.response;
    },
  };
}

const tile = (seed: number, size = 64) => makeImage('png', { seed, width: size, height: size });

describe('uploads received to disk', () => {
  it('writes the parts to a scratch folder under DATA_DIR as they arrive, and removes it once the upload is stored', async () => {
    const setId = await newSet(team, 'Streamed');
    // About 3 MiB of incompressible pixels.
    const png = await tile(1, 1024);
    const held = await holdUpload(team.engineer, team.teamId, setId, png, 2 * MiB);
    // Before the request is complete, what has arrived is already on disk, in a folder of this request.
    await until(() => scratch().files.some((f) => f.bytes >= MiB), 'the first MiB of the part reached the scratch folder');
    expect(scratch().folders).toHaveLength(1);
    expect(scratch().folders[0]).toMatch(/^req-/);
    const answer = await held.finish();
    expect(answer.status, JSON.stringify(answer.json)).toBe(201);
    const image = (answer.json as { images: { sha256: string }[] }).images[0];
    expect(existsSync(t.composition.contentStore.path(image.sha256))).toBe(true);
    expect(scratch().folders).toEqual([]);
  });

  it('removes the scratch folder when an upload is refused', async () => {
    const setId = await newSet(team, 'Refused');
    const broken = await request(t.app)
      .post(`/api/teams/${team.teamId}/image-sets/${setId}/images`)
      .set(bearer(team.engineer))
      .attach('files', Buffer.from('not an image at all'), 'notes.png');
    expect(broken.status).toBe(400);
    expect(scratch().folders).toEqual([]);
    const huge = await request(t.app)
      .post(`/api/teams/${team.teamId}/image-sets/${setId}/images`)
      .set(bearer(team.engineer))
      .attach('files', Buffer.alloc(9 * MiB, 3), 'huge.png');
    expect(huge.status).toBe(413);
    expect(scratch().folders).toEqual([]);
  });

  it('removes the scratch folder and frees the place when the client goes away mid-upload', async () => {
    const setId = await newSet(team, 'Abandoned');
    const held = await holdUpload(team.engineer, team.teamId, setId, await tile(2, 1024), MiB);
    await until(() => scratch().files.length > 0, 'the part reached the scratch folder');
    held.request.abort();
    await until(() => scratch().folders.length === 0, 'the scratch folder of the abandoned upload was removed');
    // One upload per user here: this one is taken only if the abandoned one gave its place back.
    const next = await request(t.app).post(`/api/teams/${team.teamId}/image-sets/${setId}/images`).set(bearer(team.engineer)).attach('files', await tile(3), 'after.png');
    expect(next.status).toBe(201);
    expect(await t.db.knex('images').where({ set_id: setId })).toHaveLength(1);
  });

  it('clears scratch folders that a killed server left behind, once they are older than the grace period', async () => {
    const stale = path.join(scratchRoot, 'req-killed');
    mkdirSync(stale, { recursive: true });
    writeFileSync(path.join(stale, 'part-1'), 'half an upload');
    const hour = 60 * 60 * 1000;
    const sweeper = (aheadMs: number) =>
      createStoreSweeper({ db: t.composition.db, store: t.composition.contentStore, spool: createSpool(t.composition.config.dataDir), graceMs: hour, now: () => Date.now() + aheadMs });
    // Within the grace period it could still be an upload in progress.
    await sweeper(0).sweep();
    expect(existsSync(stale)).toBe(true);
    const report = await sweeper(2 * hour).sweep();
    expect(existsSync(stale)).toBe(false);
    expect(report.leftovers).toBeGreaterThanOrEqual(1);
  });
});

describe('uploads in progress', () => {
  it('refuses a second upload of the same user with 429 while the first is being received', async () => {
    const setId = await newSet(team, 'One at a time');
    const held = await holdUpload(team.engineer, team.teamId, setId, await tile(4, 512), 64 * 1024);
    await until(() => scratch().folders.length === 1, 'the first upload took its place');
    const second = await request(t.app).post(`/api/teams/${team.teamId}/image-sets/${setId}/images`).set(bearer(team.engineer)).attach('files', await tile(5), 'second.png');
    expect(second.status).toBe(429);
    expect(second.body.error).toMatchObject({ code: 'rate_limited', message: expect.stringMatching(/in progress/) });
    const first = await held.finish();
    expect(first.status).toBe(201);
    const third = await request(t.app).post(`/api/teams/${team.teamId}/image-sets/${setId}/images`).set(bearer(team.engineer)).attach('files', await tile(6), 'third.png');
    expect(third.status).toBe(201);
    expect(scratch().folders).toEqual([]);
  });

  it('refuses any upload with 429 once the server holds as many as it takes in all, and takes them again after', async () => {
    const setId = await newSet(team, 'Crowded');
    const otherSet = await newSet(other, 'Crowded too');
    const one = await holdUpload(team.engineer, team.teamId, setId, await tile(7, 512), 64 * 1024);
    const two = await holdUpload(team.admin, team.teamId, setId, await tile(8, 512), 64 * 1024);
    await until(() => scratch().folders.length === 2, 'both uploads took their places');
    // A user with no upload of their own in progress, in another team: only the server-wide cap refuses it.
    const refused = await request(t.app).post(`/api/teams/${other.teamId}/image-sets/${otherSet}/images`).set(bearer(other.engineer)).attach('files', await tile(9), 'crowded.png');
    expect(refused.status).toBe(429);
    expect(refused.body.error.code).toBe('rate_limited');
    expect(await t.db.knex('images').where({ set_id: otherSet })).toHaveLength(0);
    expect((await one.finish()).status).toBe(201);
    expect((await two.finish()).status).toBe(201);
    const taken = await request(t.app).post(`/api/teams/${other.teamId}/image-sets/${otherSet}/images`).set(bearer(other.engineer)).attach('files', await tile(9), 'crowded.png');
    expect(taken.status).toBe(201);
  });
});
