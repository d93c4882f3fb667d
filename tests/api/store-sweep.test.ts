import { existsSync, mkdirSync, utimesSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { codewordChecksum } from '../../server/engine';
import { createStoreSweeper } from '../../server/services/store-sweep';
import { contentStoreLock, sha256Of } from '../../server/storage/content-store';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
import { makeImage } from '../unit/storage/support/images';

let t: TestApp;
let a: Awaited<ReturnType<typeof teamWithRoles>>;
let b: Awaited<ReturnType<typeof teamWithRoles>>;

const hour = 60 * 60_000;

beforeAll(async () => {
  t = await createTestApp();
  a = await teamWithRoles(t, 'Sweep team A');
  b = await teamWithRoles(t, 'Sweep team B');
});
afterAll(async () => {
  await t?.composition.reconstructionPool.destroy();
  await t?.close();
});

let counter = 0;
async function upload(team: typeof a, data: Buffer, name: string) {
  const set = await request(t.app).post(`/api/teams/${team.teamId}/image-sets`).set(bearer(team.engineer)).send({ name: `Sweep ${++counter}` });
  const res = await request(t.app).post(`/api/teams/${team.teamId}/image-sets/${set.body.imageSet.id}/images`).set(bearer(team.engineer)).attach('files', data, name);
  expect(res.status).toBe(201);
  return { setId: set.body.imageSet.id as number, image: res.body.images[0] as { id: number; sha256: string } };
}

/** A sweeper whose clock runs `aheadMs` in the future, as if that much time had passed since the uploads. */
const sweeperAhead = (aheadMs: number) =>
  createStoreSweeper({ db: t.composition.db, store: t.composition.contentStore, graceMs: hour, now: () => Date.now() + aheadMs });

describe('sweeping the content store', () => {
  it('frees the bytes and thumbnail of a deleted image once the grace period has passed, and only then', async () => {
    const png = await makeImage('png', { seed: 101 });
    const { image } = await upload(a, png, 'gone.png');
    const store = t.composition.contentStore;
    await request(t.app).delete(`/api/teams/${a.teamId}/images/${image.id}`).set(bearer(a.admin)).expect(204);

    // Within the hour the upload could still be committing a row that names them: kept.
    const early = await sweeperAhead(0).sweep();
    expect(early.removed).toBe(0);
    expect(existsSync(store.path(image.sha256))).toBe(true);

    const later = await sweeperAhead(2 * hour).sweep();
    expect(later.removed).toBeGreaterThanOrEqual(1);
    expect(later.bytesFreed).toBeGreaterThanOrEqual(png.length);
    expect(existsSync(store.path(image.sha256))).toBe(false);
    expect(existsSync(store.thumbnailPath(image.sha256))).toBe(false);
  });

  it('keeps bytes that an image of another team still names, and serves them unchanged', async () => {
    const png = await makeImage('png', { seed: 102 });
    const mine = await upload(a, png, 'shared.png');
    const theirs = await upload(b, png, 'shared.png');
    await request(t.app).delete(`/api/teams/${a.teamId}/images/${mine.image.id}`).set(bearer(a.admin)).expect(204);

    await sweeperAhead(2 * hour).sweep();
    expect(existsSync(t.composition.contentStore.path(theirs.image.sha256))).toBe(true);
    const res = await request(t.app)
      .get(`/api/teams/${b.teamId}/images/${theirs.image.id}/original`)
      .set(bearer(b.viewer))
      .buffer(true)
      .parse((r, done) => {
        const chunks: Buffer[] = [];
        r.on('data', (c: Buffer) => chunks.push(c));
        r.on('end', () => done(null, Buffer.concat(chunks)));
      });
    expect(res.status).toBe(200);
    // node:crypto's SHA-256 (FIPS 180-4) of what was served equals that of what was uploaded.
    expect(sha256Of(res.body as Buffer)).toBe(sha256Of(png));
  });

  it('frees the bytes of a whole deleted set and takes the same bytes again afterwards', async () => {
    const png = await makeImage('png', { seed: 103 });
    const first = await upload(a, png, 'again.png');
    await request(t.app).delete(`/api/teams/${a.teamId}/image-sets/${first.setId}`).set(bearer(a.admin)).expect(204);
    await sweeperAhead(2 * hour).sweep();
    expect(existsSync(t.composition.contentStore.path(first.image.sha256))).toBe(false);

    const second = await upload(a, png, 'again.png');
    expect(second.image.sha256).toBe(first.image.sha256);
    expect(existsSync(t.composition.contentStore.path(second.image.sha256))).toBe(true);
    await request(t.app).get(`/api/teams/${a.teamId}/images/${second.image.id}/thumbnail`).set(bearer(a.viewer)).expect(200);
  });

  it('deletes what crashed writes left behind and nothing that is named', async () => {
    const png = await makeImage('png', { seed: 104 });
    const kept = await upload(a, png, 'kept.png');
    const store = t.composition.contentStore;
    const fan = path.dirname(store.path(kept.image.sha256));
    const stale = path.join(fan, '.tmp-999999-0123456789ab');
    mkdirSync(fan, { recursive: true });
    writeFileSync(stale, 'half an upload');
    const longAgo = new Date(Date.now() - 3 * hour);
    utimesSync(stale, longAgo, longAgo);

    const report = await sweeperAhead(2 * hour).sweep();
    expect(report.leftovers).toBeGreaterThanOrEqual(1);
    expect(existsSync(stale)).toBe(false);
    expect(existsSync(store.path(kept.image.sha256))).toBe(true);
    expect(existsSync(store.thumbnailPath(kept.image.sha256))).toBe(true);
  });

  it('does nothing while a backup holds the store, and frees the bytes on the pass after it', async () => {
    const png = await makeImage('png', { seed: 105 });
    const { image } = await upload(a, png, 'during-backup.png');
    await request(t.app).delete(`/api/teams/${a.teamId}/images/${image.id}`).set(bearer(a.admin)).expect(204);
    const sweeper = sweeperAhead(2 * hour);
    // The lock a backup takes (scripts/backup.ts), held on a connection of its own.
    const during = await t.composition.db.withNamedLock(contentStoreLock, 5, () => sweeper.sweep());
    expect(during?.value).toMatchObject({ skipped: true, removed: 0 });
    expect(existsSync(t.composition.contentStore.path(image.sha256))).toBe(true);

    const after = await sweeper.sweep();
    expect(after.skipped).toBe(false);
    expect(existsSync(t.composition.contentStore.path(image.sha256))).toBe(false);
  });

  it('keeps the reconstruction views a row names, and frees them once their image or codebook is gone', async () => {
    // A 2×2 luma codebook of four flat codewords, written as the export format describes (server/engine/format/FORMAT.md).
    const codewords = [0, 85, 170, 255].map((v) => [v, v, v, v]);
    const document = {
      format: 'cellwright-codebook',
      version: 1,
      bits: 2,
      size: 4,
      dimension: 4,
      patch: { width: 2, height: 2, channels: 1, color: 'luma' },
      preprocessing: { kind: 'none' },
      codewords,
      usage: [1, 1, 1, 1],
      training: { source: 'flat levels', vectorCount: 4, init: 'random', epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] },
      checksum: codewordChecksum(new Float32Array(codewords.flat())),
    };
    const imported = await request(t.app).post(`/api/teams/${a.teamId}/codebooks/import`).set(bearer(a.engineer)).send(document);
    expect(imported.status).toBe(201);
    const codebookId = imported.body.codebook.id as number;
    const store = t.composition.contentStore;
    const viewsOf = async (imageId: number) => {
      const res = await request(t.app).get(`/api/teams/${a.teamId}/codebooks/${codebookId}/reconstruction/${imageId}?view=error`).set(bearer(a.viewer));
      expect(res.status).toBe(200);
      const row = await t.db.knex('reconstructions').where({ codebook_id: codebookId, image_id: imageId }).first();
      return [row.original_sha256, row.reconstruction_sha256, row.error_sha256] as string[];
    };

    const first = await upload(a, await makeImage('png', { seed: 106, width: 40, height: 24 }), 'seen.png');
    const second = await upload(a, await makeImage('png', { seed: 107, width: 24, height: 40 }), 'seen-too.png');
    const firstViews = await viewsOf(first.image.id);
    const secondViews = await viewsOf(second.image.id);
    for (const sha of [...firstViews, ...secondViews]) expect(existsSync(store.path(sha))).toBe(true);

    // Named by their rows: kept, however old.
    await sweeperAhead(2 * hour).sweep();
    for (const sha of [...firstViews, ...secondViews]) expect(existsSync(store.path(sha))).toBe(true);

    // The image goes: its reconstruction rows go with it, and the next pass frees their files.
    await request(t.app).delete(`/api/teams/${a.teamId}/images/${first.image.id}`).set(bearer(a.admin)).expect(204);
    expect(await t.db.knex('reconstructions').where({ image_id: first.image.id })).toEqual([]);
    await sweeperAhead(2 * hour).sweep();
    for (const sha of firstViews) expect(existsSync(store.path(sha))).toBe(false);
    for (const sha of secondViews) expect(existsSync(store.path(sha))).toBe(true);

    // The codebook goes (as a run's do with their run): the same.
    await t.db.knex('codebooks').where({ id: codebookId }).delete();
    expect(await t.db.knex('reconstructions').where({ codebook_id: codebookId })).toEqual([]);
    await sweeperAhead(2 * hour).sweep();
    for (const sha of secondViews) expect(existsSync(store.path(sha))).toBe(false);
    expect(existsSync(store.path(second.image.sha256))).toBe(true);
  });

  it('runs one pass at a time: a second call while one runs gets the same pass', async () => {
    const sweeper = sweeperAhead(2 * hour);
    const [one, two] = [sweeper.sweep(), sweeper.sweep()];
    expect(one).toBe(two);
    await one;
  });
});
