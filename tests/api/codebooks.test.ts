import { createHash } from 'node:crypto';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
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

/** A codebook document written by hand from the format description, not by the engine. */
function handMade(size = 2, dimension = 4, scale = 1) {
  const codewords = Array.from({ length: size }, (_, k) => Array.from({ length: dimension }, (_, i) => Math.fround(((k * 37 + i * 11) % 256) / scale)));
  return {
    format: 'cellwright-codebook',
    version: 1,
    bits: Math.ceil(Math.log2(size)),
    size,
    dimension,
    patch: { width: 2, height: dimension / 2, channels: 1, color: 'luma' },
    preprocessing: { kind: 'none' },
    codewords,
    usage: codewords.map(() => 3),
    training: { source: 'hand-made', vectorCount: size * 3, init: 'random', epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] },
    checksum: checksumOf(codewords),
  };
}

const importUrl = (teamId = team.teamId) => `/api/teams/${teamId}/codebooks/import`;
const importedCount = async () => Number(((await t.db.knex('codebooks').count({ n: '*' })) as { n: number }[])[0].n);

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Codebook Team');
  other = await signUp(t.app, { teamName: 'Elsewhere', email: uniqueEmail('elsewhere') });
});
afterAll(async () => {
  await t?.close();
});

describe('codebook import and export', () => {
  let id: number;

  it('imports a hand-written document and exports the same document back', async () => {
    const doc = handMade();
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(doc);
    expect(res.status).toBe(201);
    id = res.body.codebook.id;
    expect(res.body.codebook).toMatchObject({ source: 'imported', origin: 'imported', name: 'hand-made', bits: 1, size: 2, checksum: doc.checksum, cellDistortion: null });
    expect(res.body.codebook.codewords).toEqual(doc.codewords);

    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${id}/export`).set(bearer(team.engineer));
    expect(exported.status).toBe(200);
    expect(exported.headers['content-type']).toMatch(/^application\/json/);
    expect(exported.headers['content-disposition']).toBe('attachment; filename="hand-made-b1.cellwright.json"');
    expect(exported.body).toEqual(doc);
    const actions = (await t.db.knex('audit_log').where({ target_type: 'codebook', target_id: String(id) }).select('action')).map((r) => r.action);
    expect(actions.sort()).toEqual(['codebook.exported', 'codebook.imported']);
  });

  it('imports a document larger than the 1 MB limit of other bodies', async () => {
    // Values like 13/7 print with many digits, so 4096 × 16 of them pass a megabyte.
    const doc = handMade(4096, 16, 7);
    const body = JSON.stringify(doc);
    expect(body.length).toBeGreaterThan(1024 * 1024);
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).set('Content-Type', 'application/json').send(body);
    expect(res.status).toBe(201);
    expect(res.body.codebook.size).toBe(4096);
  });

  const broken: [string, (d: ReturnType<typeof handMade>) => unknown, string][] = [
    ['a wrong checksum', (d) => ({ ...d, checksum: 'f'.repeat(64) }), 'checksum'],
    ['a changed codeword', (d) => ({ ...d, codewords: [[1, 0, 0, 0], d.codewords[1]] }), 'checksum'],
    ['bits that do not match the size', (d) => ({ ...d, bits: 3 }), 'bits'],
    ['a dimension that does not match the patch', (d) => ({ ...d, dimension: 5 }), 'dimension'],
    ['three channels for luma', (d) => ({ ...d, patch: { ...d.patch, channels: 3 } }), 'patch.channels'],
    ['a short codeword', (d) => ({ ...d, codewords: [d.codewords[0], [1, 2, 3]] }), 'codewords[1]'],
    ['a foreign format', (d) => ({ ...d, format: 'something-else' }), 'format'],
    ['no usage', ({ usage: _u, ...d }) => d, 'usage'],
    ['no patch geometry', (d) => ({ ...d, patch: null }), 'patch'],
  ];
  for (const [what, corrupt, field] of broken) {
    it(`refuses a document with ${what}, naming ${field}`, async () => {
      const before = await importedCount();
      const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(corrupt(handMade()) as object);
      expect(res.status).toBe(400);
      expect(res.body.error.code).toBe('validation_failed');
      expect(res.body.error.details[0].path).toBe(field);
      expect(await importedCount()).toBe(before);
    });
  }

  it('refuses a body that is not JSON with the error shape', async () => {
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).set('Content-Type', 'application/json').send('{"format": ');
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('bad_request');
  });

  it('lists imported codebooks as imported', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    expect(res.status).toBe(200);
    expect(res.body.codebooks.find((c: { id: number }) => c.id === id)).toMatchObject({ origin: 'imported', source: 'imported' });
  });

  it('rejects a viewer with 403 on import and export but lets them read', async () => {
    expect((await request(t.app).post(importUrl()).set(bearer(team.viewer)).send(handMade())).status).toBe(403);
    expect((await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${id}/export`).set(bearer(team.viewer))).status).toBe(403);
    expect((await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${id}`).set(bearer(team.viewer))).status).toBe(200);
    expect((await request(t.app).post(importUrl()).set(bearer(team.admin)).send(handMade())).status).toBe(201);
  });

  it("answers 404 to another team for the codebook and its export, through either team's URL", async () => {
    for (const teamId of [team.teamId, other.teamId]) {
      for (const suffix of ['', '/export']) {
        const res = await request(t.app).get(`/api/teams/${teamId}/codebooks/${id}${suffix}`).set(bearer(other));
        expect(res.status).toBe(404);
        expect(res.body.error.code).toBe('not_found');
      }
    }
    const theirs = await request(t.app).get(`/api/teams/${other.teamId}/codebooks`).set(bearer(other));
    expect(theirs.body.codebooks).toEqual([]);
  });
});
