import { execFile } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, signUp, teamWithRoles, type Session, type TestApp } from '../helpers/api';
import { createSetWith, finishedRun, seabedPngs } from '../helpers/studio';

const run = promisify(execFile);

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let outsider: Session;
let dir: string;
let rgbCodebook: number;
let meanCodebook: number;
let imageId: number;

const W = 40;
const H = 30;

/** Keeps a binary response body as one Buffer. */
function collect(res: request.Response, done: (err: Error | null, body: Buffer) => void) {
  const chunks: Buffer[] = [];
  const stream = res as unknown as NodeJS.ReadableStream;
  stream.on('data', (c: Buffer) => chunks.push(c));
  stream.on('end', () => done(null, Buffer.concat(chunks)));
}

const download = (s: Session, path: string) => request(t.app).get(`/api/teams/${s.teamId}${path}`).set(bearer(s)).buffer(true).parse(collect);

/** Runs Python with NumPy on files of this test; the script prints one JSON value. */
async function numpy(script: string): Promise<unknown> {
  const { stdout } = await run('python3', ['-c', `import json, numpy as np\n${script}`], { cwd: dir });
  return JSON.parse(stdout);
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-npy-'));
  t = await createTestApp();
  await t.composition.jobs.runner.start();
  team = await teamWithRoles(t, 'Npy Team');
  outsider = await signUp(t.app, { teamName: 'Other Npy Team' });
  const trainingSetId = await createSetWith(t.app, team.engineer, 'training', await seabedPngs(61, 3, W, H));
  const heldOutSetId = await createSetWith(t.app, team.engineer, 'held-out', await seabedPngs(62, 1, W, H));
  imageId = (await t.db.knex('images').where({ set_id: heldOutSetId }).first()).id;
  const common = { trainingSetId, heldOutSetId, bits: 3, init: 'split', seed: 4 };
  const rgbRun = await finishedRun(t.app, team.engineer, { ...common, name: 'colour 2x2', patch: { width: 2, height: 2 }, color: 'rgb' });
  const meanRun = await finishedRun(t.app, team.engineer, { ...common, name: 'luma 4x2 means', patch: { width: 4, height: 2 }, color: 'luma', meanBits: 5 });
  rgbCodebook = (await t.db.knex('codebooks').where({ run_id: rgbRun }).first()).id;
  meanCodebook = (await t.db.knex('codebooks').where({ run_id: meanRun }).first()).id;
});

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.composition.reconstructionPool.destroy();
  await t?.close();
  rmSync(dir, { recursive: true, force: true });
});

describe('codewords as .npy', () => {
  it('downloads the codewords as a version 1.0 .npy that numpy.load reads back value for value', async () => {
    const res = await download(team.viewer, `/codebooks/${rgbCodebook}/export?target=npy`);
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toBe('application/octet-stream');
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="colour-2x2-b3\.codewords\.npy"$/);
    const bytes = res.body as Buffer;
    // NEP 1: "\x93NUMPY", version 1.0, little-endian uint16 header length, data aligned to 64 bytes.
    expect(bytes.subarray(0, 8)).toEqual(Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0]));
    expect((10 + bytes.readUInt16LE(8)) % 64).toBe(0);
    writeFileSync(join(dir, 'codewords.npy'), bytes);
    const loaded = (await numpy(`a = np.load('codewords.npy')\nprint(json.dumps({'dtype': str(a.dtype), 'shape': a.shape, 'values': a.astype(float).tolist()}))`)) as {
      dtype: string; shape: number[]; values: number[][];
    };
    const detail = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${rgbCodebook}`).set(bearer(team.viewer));
    expect(loaded.dtype).toBe('float32');
    expect(loaded.shape).toEqual([8, 12]);
    // The detail sends the shortest decimals that read back to the same float32; numpy's float32 widened to float64.
    expect(loaded.values).toEqual((detail.body.codebook.codewords as number[][]).map((row) => row.map((v) => Math.fround(v))));
  });

  it("records the .npy export in the audit trail and answers 404 for another team's codebook", async () => {
    const audit = await t.db.knex('audit_log').where({ action: 'codebook.exported', target_id: String(rgbCodebook) });
    expect(audit.map((a) => (typeof a.details === 'string' ? JSON.parse(a.details) : a.details).target)).toContain('npy');
    expect((await download(outsider, `/codebooks/${rgbCodebook}/export?target=npy`)).status).toBe(404);
    expect((await download(team.viewer, `/codebooks/${rgbCodebook}/export?target=csv`)).status).toBe(400);
  });
});

describe('index maps as .npy', () => {
  it("rebuilds the studio's reconstruction exactly from the index map and the codewords, in plain NumPy", async () => {
    const map = await download(team.viewer, `/codebooks/${rgbCodebook}/index-map/${imageId}`);
    expect(map.status).toBe(200);
    expect(map.headers['content-disposition']).toMatch(new RegExp(`-codebook-${rgbCodebook}\\.indices\\.npy"$`));
    writeFileSync(join(dir, 'indices.npy'), map.body as Buffer);
    writeFileSync(join(dir, 'codewords.npy'), (await download(team.viewer, `/codebooks/${rgbCodebook}/export?target=npy`)).body as Buffer);
    const view = await download(team.viewer, `/codebooks/${rgbCodebook}/reconstruction/${imageId}?view=reconstruction`);
    const { data } = await sharp(view.body as Buffer).removeAlpha().raw().toBuffer({ resolveWithObject: true });
    // The decoder of FORMAT.md: codeword per block, rounded half up and clamped to 0..255, blocks (2×2 pixels × RGB,
    // row-major) put back in raster order.
    const rebuilt = (await numpy(`idx = np.load('indices.npy')
cw = np.load('codewords.npy').astype(np.float64)
blocks = np.clip(np.floor(cw[idx] + 0.5), 0, 255)
by, bx = idx.shape
img = blocks.reshape(by, bx, 2, 2, 3).transpose(0, 2, 1, 3, 4).reshape(by * 2, bx * 2, 3)[:${H}, :${W}]
print(json.dumps({'dtype': str(idx.dtype), 'shape': idx.shape, 'pixels': img.astype(int).ravel().tolist()}))`)) as { dtype: string; shape: number[]; pixels: number[] };
    expect(rebuilt.dtype).toBe('uint16');
    expect(rebuilt.shape).toEqual([H / 2, W / 2]);
    expect(rebuilt.pixels).toEqual([...data]);
  });

  it("gives a mean-removed codebook's block mean codes as uint8, and 404 for a codebook without means", async () => {
    const means = await download(team.viewer, `/codebooks/${meanCodebook}/index-map/${imageId}?plane=means`);
    expect(means.status).toBe(200);
    writeFileSync(join(dir, 'means.npy'), means.body as Buffer);
    const loaded = (await numpy(`a = np.load('means.npy')\nprint(json.dumps({'dtype': str(a.dtype), 'shape': a.shape, 'max': int(a.max())}))`)) as { dtype: string; shape: number[]; max: number };
    expect(loaded.dtype).toBe('uint8');
    // 4×2 blocks over 40×30 pixels: 10 × 15; 5 mean bits give codes below 32.
    expect(loaded.shape).toEqual([15, 10]);
    expect(loaded.max).toBeLessThan(32);
    const none = await download(team.viewer, `/codebooks/${rgbCodebook}/index-map/${imageId}?plane=means`);
    expect(none.status).toBe(404);
  });

  it("answers 404 for another team's codebook or image and 400 for an unknown plane", async () => {
    expect((await download(outsider, `/codebooks/${rgbCodebook}/index-map/${imageId}`)).status).toBe(404);
    const theirs = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${rgbCodebook}/index-map/${imageId + 100000}`).set(bearer(team.viewer));
    expect(theirs.status).toBe(404);
    expect((await download(team.viewer, `/codebooks/${rgbCodebook}/index-map/${imageId}?plane=colours`)).status).toBe(400);
  });
});
