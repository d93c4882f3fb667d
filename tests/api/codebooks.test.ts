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
    version: 2,
    bits: Math.ceil(Math.log2(size)),
    size,
    dimension,
    patch: { width: 2, height: dimension / 2, channels: 1, color: 'luma' },
    preprocessing: { kind: 'none' },
    codewords,
    usage: codewords.map(() => 3),
    training: { source: 'hand-made', vectorCount: size * 3, init: 'random', epsilon: 0, seed: null, iterations: 0, distortion: 0, trace: [] },
    structure: { kind: 'full' } as Record<string, unknown>,
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

  it('imports a revision 1 document as full search and exports it as revision 2', async () => {
    const { structure: _none, ...v1 } = { ...handMade(4), version: 1 };
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(v1);
    expect(res.status).toBe(201);
    expect(res.body.codebook).toMatchObject({ structure: 'full', lambda: null });
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${res.body.codebook.id}/export`).set(bearer(team.engineer));
    expect(exported.body).toEqual({ ...v1, version: 2, structure: { kind: 'full' } });
  });

  it('imports an entropy-constrained document, lists its structure and λ, and exports it back', async () => {
    const doc = { ...handMade(4), structure: { kind: 'entropy-constrained', lambda: 120.5, codeLengths: [1, 2, 3, 3] } };
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(doc);
    expect(res.status).toBe(201);
    expect(res.body.codebook).toMatchObject({ structure: 'entropy-constrained', lambda: 120.5 });
    const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    expect(list.body.codebooks.find((c: { id: number }) => c.id === res.body.codebook.id)).toMatchObject({ structure: 'entropy-constrained', lambda: 120.5 });
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${res.body.codebook.id}/export`).set(bearer(team.engineer));
    expect(exported.body).toEqual(doc);
  });

  it('refuses Huffman lengths that break Kraft\'s inequality with 400 and stores nothing', async () => {
    const before = await importedCount();
    // 2^−1 + 2^−1 + 2^−2 + 2^−3 > 1 (Cover & Thomas, Elements of Information Theory, Thm 5.2.1).
    const doc = { ...handMade(4), structure: { kind: 'entropy-constrained', lambda: 1, codeLengths: [1, 1, 2, 3] } };
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(doc);
    expect(res.status).toBe(400);
    expect(res.body.error.message).toMatch(/structure\.codeLengths: the lengths over-subscribe the code space/);
    expect(await importedCount()).toBe(before);
  });

  it('imports a hand-written document and exports the same document back', async () => {
    const doc = handMade();
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(doc);
    expect(res.status).toBe(201);
    id = res.body.codebook.id;
    expect(res.body.codebook).toMatchObject({ source: 'imported', origin: 'imported', name: 'hand-made', bits: 1, size: 2, checksum: doc.checksum, cellDistortion: null, structure: 'full', lambda: null });
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

  it('rejects a viewer with 403 on import but lets them export what they read', async () => {
    expect((await request(t.app).post(importUrl()).set(bearer(team.viewer)).send(handMade())).status).toBe(403);
    const detail = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${id}`).set(bearer(team.viewer));
    expect(detail.status).toBe(200);
    // One rule: the export holds the codewords the detail already gives a viewer.
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${id}/export`).set(bearer(team.viewer));
    expect(exported.status).toBe(200);
    expect(exported.body.codewords).toEqual(detail.body.codebook.codewords);
    const audit = await t.db.knex('audit_log').where({ action: 'codebook.exported', target_id: String(id), actor_user_id: team.viewer.user.id });
    expect(audit).toHaveLength(1);
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

describe('imported codebook metadata', () => {
  /** A valid document whose training source and trace are as long as the format allows. */
  function heavy() {
    const doc = handMade(4, 4);
    // bits 2, maxIterations 1000: (2 + 1) sizes × 1001 passes.
    const trace = Array.from({ length: 3003 }, (_, i) => ({ size: 2 ** Math.floor(i / 1001), iteration: i % 1001, distortion: 1 / (i + 1), emptyRepaired: 0, elapsedMs: 0.25 }));
    return { ...doc, training: { ...doc.training, source: `survey/${'s'.repeat(4089)}`, maxIterations: 1000, trace } };
  }

  it('refuses a training source longer than 4096 characters, naming it, and stores nothing', async () => {
    const before = await importedCount();
    const doc = heavy();
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send({ ...doc, training: { ...doc.training, source: `${doc.training.source}s` } });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0]).toMatchObject({ path: 'training.source', message: expect.stringMatching(/at most 4096 characters/) });
    expect(await importedCount()).toBe(before);
  });

  it('refuses a trace longer than its sizes and iterations allow, naming it, and stores nothing', async () => {
    const before = await importedCount();
    const doc = heavy();
    const trace = [...doc.training.trace, doc.training.trace[0]];
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send({ ...doc, training: { ...doc.training, trace } });
    expect(res.status).toBe(400);
    expect(res.body.error.details[0]).toMatchObject({ path: 'training.trace', message: expect.stringMatching(/at most 3003 entries/) });
    expect(await importedCount()).toBe(before);
  });

  it('stores the trace and the usage once, and the source once beside the name taken from it', async () => {
    const doc = heavy();
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(doc);
    expect(res.status).toBe(201);
    const row = await t.db.knex('codebooks').where({ id: res.body.codebook.id }).first();
    const text = (v: unknown) => (typeof v === 'string' ? v : JSON.stringify(v));
    const stored = [row.metadata, row.trace, row.usage, row.cell_distortion].map(text).join('\n');
    const count = (needle: string) => stored.split(needle).length - 1;
    expect(count(doc.training.source)).toBe(1);
    expect(count('"elapsedMs"')).toBe(doc.training.trace.length);
    expect(JSON.parse(text(row.trace))).toEqual(doc.training.trace);
    expect(JSON.parse(text(row.usage))).toEqual(doc.usage);
    expect(row.name).toBe(doc.training.source.slice(0, 200));
    // Put back together, it is the same document, and the detail sends the trace once.
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${res.body.codebook.id}/export`).set(bearer(team.engineer));
    expect(exported.body).toEqual(doc);
    const detail = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${res.body.codebook.id}`).set(bearer(team.viewer));
    expect(detail.body.codebook.trace).toEqual(doc.training.trace);
    expect(detail.body.codebook.training.trace).toBeUndefined();
    expect(detail.body.codebook.training.source).toBe(doc.training.source);
  });

  it('lists codebooks without reading their training source, trace, usage or codewords', async () => {
    const doc = heavy();
    expect((await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(doc)).status).toBe(201);
    const statements: string[] = [];
    const listen = (q: { sql: string }) => statements.push(q.sql);
    t.db.knex.on('query', listen);
    let res: request.Response;
    try {
      res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    } finally {
      t.db.knex.off('query', listen);
    }
    expect(res.status).toBe(200);
    expect(res.body.codebooks.length).toBeGreaterThan(0);
    expect(res.body.codebooks[0].distortion).toBe(doc.training.distortion);
    const reads = statements.filter((sql) => /from `codebooks`/i.test(sql));
    expect(reads).toHaveLength(1);
    for (const column of ['metadata', 'trace', 'usage', 'cell_distortion', 'codewords']) expect(reads[0]).not.toContain(`\`${column}\``);
  });
});

describe('float32 codeword values', () => {
  /** The document with one codeword value replaced, its checksum taken over what float32 makes of it. */
  function withValue(value: number) {
    const doc = handMade();
    const codewords = doc.codewords.map((row) => [...row]);
    codewords[1][2] = value;
    return { ...doc, codewords, checksum: checksumOf(codewords) };
  }

  it('refuses a value finite as float64 but infinite as float32 (1e39), naming it, and stores nothing', async () => {
    const before = await importedCount();
    const res = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(withValue(1e39));
    expect(res.status).toBe(400);
    expect(res.body.error.details[0]).toMatchObject({ path: 'codewords[1][2]', message: expect.stringMatching(/finite as float32/) });
    expect(await importedCount()).toBe(before);
  });

  it('imports the largest finite float32, written 3.4028235e38, and exports it so it imports again', async () => {
    // 3.4028235e38 is above FLT_MAX = 3.4028234663852886e38 as a float64 and rounds to it as a float32 (IEEE 754).
    const doc = withValue(3.4028235e38);
    const first = await request(t.app).post(importUrl()).set(bearer(team.engineer)).send(doc);
    expect(first.status).toBe(201);
    const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${first.body.codebook.id}/export`).set(bearer(team.engineer));
    expect(exported.text).toContain('3.4028235e+38');
    const again = await request(t.app).post(importUrl()).set(bearer(team.engineer)).set('Content-Type', 'application/json').send(exported.text);
    expect(again.status).toBe(201);
    expect(again.body.codebook.checksum).toBe(doc.checksum);
  });
});
