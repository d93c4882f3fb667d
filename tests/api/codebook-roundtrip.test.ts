// The studio's own export imports again, for every kind of codebook it stores: trained ones (luma and rgb, with and
// without mean removal, from each initialisation) and imported ones, edge values of float32 included.
import { createHash } from 'node:crypto';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { bearer, createTestApp, signUp, teamWithRoles, uniqueEmail, type Session, type TestApp } from '../helpers/api';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let other: Session;

/** FIPS 180-4 SHA-256 (node:crypto) over the codewords as IEEE 754 binary32 little-endian, row-major. */
function checksumOf(codewords: number[][]): string {
  const flat = codewords.flat();
  const bytes = Buffer.alloc(flat.length * 4);
  flat.forEach((v, i) => bytes.writeFloatLE(v, i * 4));
  return createHash('sha256').update(bytes).digest('hex');
}

async function uploadSet(session: Session, name: string): Promise<number> {
  const created = await request(t.app).post(`/api/teams/${session.teamId}/image-sets`).set(bearer(session)).send({ name });
  expect(created.status).toBe(201);
  const id = created.body.imageSet.id as number;
  let req = request(t.app).post(`/api/teams/${session.teamId}/image-sets/${id}/images`).set(bearer(session));
  for (const [i, tile] of seabedSet(21, 4, 48, 32).entries()) {
    const png = await sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
    req = req.attach('files', png, `tile-${i}.png`);
  }
  expect((await req).status).toBe(201);
  const split = await request(t.app).post(`/api/teams/${session.teamId}/image-sets/${id}/split`).set(bearer(session)).send({ heldOutFraction: 0.25, seed: 3 });
  expect(split.status).toBe(200);
  return id;
}

async function trainToTheEnd(body: Record<string, unknown>): Promise<void> {
  const created = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send(body);
  expect(created.status).toBe(201);
  for (let i = 0; i < 1200; i += 1) {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${created.body.run.id}`).set(bearer(team.engineer));
    if (res.body.run.state === 'succeeded') return;
    if (['failed', 'cancelled'].includes(res.body.run.state)) throw new Error(`run ended ${res.body.run.state}: ${res.body.run.error}`);
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error('the run did not finish');
}

/** A hand-written document holding the extremes of float32: ±FLT_MAX, the smallest subnormal, −0 and a rounded value. */
function extremes() {
  const codewords = [
    [3.4028235e38, -3.4028235e38, 1e-45, -0],
    [Math.fround(0.1), 255, -255, Math.fround(1 / 3)],
  ];
  return {
    format: 'cellwright-codebook',
    version: 1,
    bits: 1,
    size: 2,
    dimension: 4,
    patch: { width: 2, height: 2, channels: 1, color: 'luma' },
    preprocessing: { kind: 'none' },
    codewords,
    usage: [5, 7],
    training: { source: 'edge values', vectorCount: 12, init: 'random', epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] },
    // JSON has no −0 (it is written 0), so the checksum describes the codewords a reader sees.
    checksum: checksumOf(JSON.parse(JSON.stringify(codewords)) as number[][]),
  };
}

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Round-trip Team');
  other = await signUp(t.app, { teamName: 'Receiving Team', email: uniqueEmail('receiver') });
  const setId = await uploadSet(team.engineer, 'Round-trip tiles');
  await t.composition.jobs.runner.start();
  const common = { trainingSetId: setId, heldOutSetId: setId, patch: { width: 4, height: 4 }, maxIterations: 8, seed: 4 };
  await trainToTheEnd({ ...common, name: 'luma split', color: 'luma', init: 'split', bits: { from: 1, to: 3 } });
  await trainToTheEnd({ ...common, name: 'rgb mean-removed k-means++', color: 'rgb', meanBits: 3, init: 'kmeans++', bits: 2 });
  await trainToTheEnd({ ...common, name: 'luma mean-removed random', color: 'luma', meanBits: 5, init: 'random', bits: 2 });
  await t.composition.jobs.runner.stop();
  const imported = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.engineer)).send(extremes());
  expect(imported.status).toBe(201);
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('export then import', () => {
  it('imports the export of every stored codebook again and exports the same document', async () => {
    const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    const books = list.body.codebooks as { id: number; source: string; color: string; meanBits: number }[];
    // Three trained sizes, one rgb and one luma mean-removed codebook, and the imported one.
    expect(books.map((b) => `${b.source} ${b.color} ${b.meanBits}`).sort()).toEqual([
      'imported luma 0', 'trained luma 0', 'trained luma 0', 'trained luma 0', 'trained luma 5', 'trained rgb 3',
    ]);
    for (const book of books) {
      const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${book.id}/export`).set(bearer(team.viewer));
      expect(exported.status).toBe(200);
      const back = await request(t.app)
        .post(`/api/teams/${other.teamId}/codebooks/import`)
        .set(bearer(other))
        .set('Content-Type', 'application/json')
        .send(exported.text);
      expect(back.status, `codebook ${book.id}: ${back.text.slice(0, 300)}`).toBe(201);
      const again = await request(t.app).get(`/api/teams/${other.teamId}/codebooks/${back.body.codebook.id}/export`).set(bearer(other));
      expect(again.text).toBe(exported.text);
    }
  });

  it('keeps the float32 extremes exact through the round trip', async () => {
    const list = await request(t.app).get(`/api/teams/${other.teamId}/codebooks`).set(bearer(other));
    const edge = (list.body.codebooks as { id: number; name: string }[]).find((b) => b.name === 'edge values')!;
    const exported = await request(t.app).get(`/api/teams/${other.teamId}/codebooks/${edge.id}/export`).set(bearer(other));
    expect(exported.body.codewords).toEqual([
      [3.4028235e38, -3.4028235e38, 1e-45, 0],
      [0.1, 255, -255, 0.33333334],
    ]);
    expect(exported.body.checksum).toBe(extremes().checksum);
  });
});
