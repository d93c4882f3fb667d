// Run creation refuses a run whose training would hold more than TRAINING_MAX_BYTES, naming the figures, and writes nothing.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, signUp, type Session, type TestApp } from '../helpers/api';
import { createSetWith, seabedPngs } from '../helpers/studio';

let t: TestApp;
let engineer: Session;
let trainingSetId: number;
let heldOutSetId: number;

// A small cap, so that small images can pass it: 128 KiB.
const CAP = 128 * 1024;

beforeAll(async () => {
  t = await createTestApp({ TRAINING_MAX_BYTES: String(CAP) });
  engineer = await signUp(t.app, { teamName: 'Memory Team' });
  trainingSetId = await createSetWith(t.app, engineer, 'training', await seabedPngs(61, 3, 64, 48));
  heldOutSetId = await createSetWith(t.app, engineer, 'held-out', await seabedPngs(62, 1, 64, 48));
});
afterAll(async () => {
  await t?.close();
});

const body = (maxVectors?: number) => ({
  name: 'colour 2x2',
  trainingSetId,
  heldOutSetId,
  patch: { width: 2, height: 2 },
  color: 'rgb',
  bits: 2,
  ...(maxVectors === undefined ? {} : { maxVectors }),
});

async function rowCounts() {
  const out: Record<string, number> = {};
  for (const table of ['runs', 'run_images', 'jobs', 'audit_log']) {
    out[table] = Number(((await t.db.knex(table).count({ n: '*' })) as { n: number | string }[])[0].n);
  }
  return out;
}

describe('training memory cap at run creation', () => {
  it('refuses a run over TRAINING_MAX_BYTES with 400 naming the bytes needed, the cap, the vectors and the dimension, and writes nothing', async () => {
    const before = await rowCounts();
    const res = await request(t.app).post(`/api/teams/${engineer.teamId}/runs`).set(bearer(engineer)).send(body());
    expect(res.status).toBe(400);
    expect(res.body.error.code).toBe('validation_failed');
    // Three 64×48 images give 32 × 24 patches of 2×2 each: 2304 vectors of 2·2·3 = 12 components.
    const [issue] = res.body.error.details as Record<string, unknown>[];
    expect(issue).toMatchObject({ path: 'maxVectors', capBytes: CAP, vectors: 2304, dimension: 12, vectorBytes: 2304 * 12 * 4 });
    // At least the vectors (110 592 bytes) and one decoded 64×48 image at 15 bytes a pixel (46 080): over the cap by themselves.
    expect(issue.neededBytes as number).toBeGreaterThanOrEqual(2304 * 12 * 4 + 64 * 48 * 15);
    expect(issue.neededBytes as number).toBeGreaterThan(CAP);
    expect(issue.message).toMatch(/^training would hold .* \((\d+) bytes\), more than this studio's cap of 128 KiB \(TRAINING_MAX_BYTES\): 2304 vectors × 12 components × 4 bytes = 108 KiB/);
    expect(issue.message).toContain(`(${String(issue.neededBytes)} bytes)`);
    expect(await rowCounts()).toEqual(before);
  });

  it('accepts the same run with a vector cap that brings it under TRAINING_MAX_BYTES', async () => {
    const res = await request(t.app).post(`/api/teams/${engineer.teamId}/runs`).set(bearer(engineer)).send(body(100));
    expect(res.status).toBe(201);
    expect(res.body.run.normalized.maxVectors).toBe(100);
  });
});
