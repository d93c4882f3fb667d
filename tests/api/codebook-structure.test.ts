import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { codebookDocument } from './hostile/world';
import { residualCodebookDocument, treeCodebookDocument } from '../helpers/structure-documents';
import { createSetWith, seabedPngs } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let imageId: number;
let treeId: number;
let residualId: number;
let flatId: number;

const W = 40;
const H = 28;

async function importDoc(doc: object): Promise<number> {
  const res = await request(t.app).post(`/api/teams/${team.teamId}/codebooks/import`).set(bearer(team.engineer)).send(doc);
  expect(res.status).toBe(201);
  return res.body.codebook.id as number;
}

/** Keeps a binary response body as one Buffer. */
function collect(res: request.Response, done: (err: Error | null, body: Buffer) => void) {
  const chunks: Buffer[] = [];
  const stream = res as unknown as NodeJS.ReadableStream;
  stream.on('data', (c: Buffer) => chunks.push(c));
  stream.on('end', () => done(null, Buffer.concat(chunks)));
}

const get = (path: string, who: Session = team.viewer) => request(t.app).get(`/api/teams/${team.teamId}/codebooks/${path}`).set(bearer(who));
const png = (path: string) => get(path).buffer(true).parse(collect);

/** One-channel 8-bit pixels of a grey PNG, decoded by sharp. */
async function greyOf(bytes: Buffer): Promise<Buffer> {
  const { data, info } = await sharp(bytes).extractChannel(0).raw().toBuffer({ resolveWithObject: true });
  expect([info.width, info.height]).toEqual([W, H]);
  return data;
}

/** The stored original as the luma codebooks see it: Y' = 0.299 R' + 0.587 G' + 0.114 B' (Rec. ITU-R BT.601), unrounded. */
async function lumaOfOriginal(): Promise<Float64Array> {
  const sha = (await t.db.knex('images').where({ id: imageId }).first()).sha256 as string;
  const { data } = await sharp(t.composition.contentStore.path(sha)).removeAlpha().raw().toBuffer({ resolveWithObject: true });
  const out = new Float64Array(W * H);
  for (let p = 0; p < W * H; p++) out[p] = 0.299 * data[3 * p] + 0.587 * data[3 * p + 1] + 0.114 * data[3 * p + 2];
  return out;
}

function mseAgainst(source: Float64Array, pixels: Buffer): number {
  let sse = 0;
  for (let p = 0; p < source.length; p++) sse += (source[p] - pixels[p]) ** 2;
  return sse / source.length;
}

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Structure Team');
  outsider = await signUp(t.app, { teamName: 'Elsewhere' });
  const setId = await createSetWith(t.app, team.engineer, 'held-out', await seabedPngs(41, 1, W, H));
  imageId = (await t.db.knex('images').where({ set_id: setId }).first()).id as number;
  treeId = await importDoc(treeCodebookDocument());
  residualId = await importDoc(residualCodebookDocument());
  flatId = await importDoc(codebookDocument());
});

afterAll(async () => {
  await t?.composition.reconstructionPool.destroy();
  await t?.close();
});

describe('GET …/codebooks/:id/structure', () => {
  it('lists a tree level by level with each node’s population and which nodes are leaves, for a viewer', async () => {
    const res = await get(`${treeId}/structure`);
    expect(res.status).toBe(200);
    // The hand-made tree (tests/helpers/structure-documents.ts): root → 1, 2 (2 a leaf); 1 → 3, 4.
    expect(res.body).toEqual({
      kind: 'tree',
      balanced: false,
      depth: 2,
      leaves: 3,
      levels: [
        { level: 0, population: 14, leaves: 0, nodes: [{ node: 0, parent: null, leaf: false, usage: 14 }] },
        { level: 1, population: 14, leaves: 1, nodes: [{ node: 1, parent: 0, leaf: false, usage: 9 }, { node: 2, parent: 0, leaf: true, usage: 5 }] },
        { level: 2, population: 9, leaves: 2, nodes: [{ node: 3, parent: 1, leaf: true, usage: 4 }, { node: 4, parent: 1, leaf: true, usage: 5 }] },
      ],
    });
  });

  it('lists residual stages with their rows and the scale of the signed tiles', async () => {
    const res = await get(`${residualId}/structure`);
    expect(res.status).toBe(200);
    // Stage 2's ramps reach 8 × 1.5 = ±12 from zero, so white stands for +12.
    expect(res.body).toEqual({
      kind: 'residual',
      search: { kind: 'greedy' },
      stages: [
        { stage: 1, bits: 1, first: 0, count: 2, scale: null, usage: [8, 6] },
        { stage: 2, bits: 2, first: 2, count: 4, scale: 12, usage: [4, 3, 4, 3] },
      ],
    });
  });

  it('answers a flat codebook’s kind alone, and 404 to a member of another team', async () => {
    expect((await get(`${flatId}/structure`)).body).toEqual({ kind: 'full' });
    const foreign = await get(`${treeId}/structure`, outsider);
    expect(foreign.status).toBe(404);
  });
});

describe('GET …/reconstruction/:imageId/steps', () => {
  it('measures a tree at levels 0..2, PSNR = 10·log10(255²/MSE), the last level the full reconstruction', async () => {
    const res = await get(`${treeId}/reconstruction/${imageId}/steps`);
    expect(res.status).toBe(200);
    expect(res.body.kind).toBe('tree-level');
    expect(res.body.steps.map((s: { step: number }) => s.step)).toEqual([0, 1, 2]);
    const source = await lumaOfOriginal();
    for (const step of res.body.steps as { step: number; mse: number; psnr: number; indexBits: number }[]) {
      const pixels = await greyOf((await png(`${treeId}/reconstruction/${imageId}/steps?step=${step.step}`)).body as Buffer);
      // The codec holds luma in float32; six significant digits is what that precision leaves of the MSE.
      expect(Math.abs(mseAgainst(source, pixels) - step.mse) / step.mse).toBeLessThan(1e-5);
      // PSNR by its definition (common practice).
      expect(step.psnr).toBeCloseTo(10 * Math.log10((255 * 255) / step.mse), 9);
      expect(step.indexBits).toBeLessThanOrEqual(step.step);
    }
    // Level 0 is the root's codeword (128 everywhere) in every block.
    const rootRes = await png(`${treeId}/reconstruction/${imageId}/steps?step=0`);
    expect(rootRes.headers['content-type']).toBe('image/png');
    const root = await greyOf(rootRes.body as Buffer);
    expect(root.every((v) => v === 128)).toBe(true);
    expect(res.body.steps[0].indexBits).toBe(0);
    // Level 1 names the light leaf (node 2) or dark node 1 for every block, a 1-bit choice.
    expect(res.body.steps[1].indexBits).toBe(1);
    const full = await get(`${treeId}/reconstruction/${imageId}?view=info`);
    expect(res.body.steps[2].mse).toBe(full.body.mse);
    const fullPng = await greyOf((await png(`${treeId}/reconstruction/${imageId}?view=reconstruction`)).body as Buffer);
    expect(fullPng.equals(await greyOf((await png(`${treeId}/reconstruction/${imageId}/steps?step=2`)).body as Buffer))).toBe(true);
  });

  it('measures a residual codebook after stage 1 and stages 1+2', async () => {
    const res = await get(`${residualId}/reconstruction/${imageId}/steps`);
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ codebookId: residualId, imageId, kind: 'residual-stages' });
    expect(res.body.steps.map((s: { step: number; indexBits: number }) => [s.step, s.indexBits])).toEqual([[1, 1], [2, 3]]);
    const first = await greyOf((await png(`${residualId}/reconstruction/${imageId}/steps?step=1`)).body as Buffer);
    // Stage 1 alone: every pixel one of its two levels.
    expect(first.every((v) => v === 80 || v === 170)).toBe(true);
    const source = await lumaOfOriginal();
    expect(Math.abs(mseAgainst(source, first) - res.body.steps[0].mse) / res.body.steps[0].mse).toBeLessThan(1e-5);
    const both = await greyOf((await png(`${residualId}/reconstruction/${imageId}/steps?step=2`)).body as Buffer);
    expect(Math.abs(mseAgainst(source, both) - res.body.steps[1].mse) / res.body.steps[1].mse).toBeLessThan(1e-5);
    const full = await get(`${residualId}/reconstruction/${imageId}?view=info`);
    expect(res.body.steps[1].mse).toBe(full.body.mse);
  });

  it('refuses a flat codebook, a step the codebook lacks and a malformed step, and a foreign member', async () => {
    const flat = await get(`${flatId}/reconstruction/${imageId}/steps`);
    expect(flat.status).toBe(404);
    expect(flat.body.error.message).toMatch(/one flat table/);
    const beyond = await get(`${treeId}/reconstruction/${imageId}/steps?step=3`);
    expect(beyond.status).toBe(404);
    expect(beyond.body.error.message).toMatch(/levels are 0\.\.2/);
    expect((await get(`${residualId}/reconstruction/${imageId}/steps?step=0`)).status).toBe(404);
    const malformed = await get(`${treeId}/reconstruction/${imageId}/steps?step=x1`);
    expect(malformed.status).toBe(400);
    expect(malformed.body.error.code).toBeDefined();
    expect((await get(`${treeId}/reconstruction/${imageId}/steps`, outsider)).status).toBe(404);
    expect((await get(`${treeId}/reconstruction/${imageId}/steps?step=1`, outsider)).status).toBe(404);
  });
});
