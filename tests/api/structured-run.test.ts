// A residual run trains stages sharing each b through the real runner and job engine; the studio stores, lists,
// evaluates and exports the codebooks with their structure, and refuses structure options that do not fit.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseCodebook } from '../../server/engine';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
import { splitSeabedSet, untilEvaluated } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let runId: number;
let treeRunId: number;

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Stages Team');
  const setId = await splitSeabedSet(t.app, team.engineer, 'Seabed tiles', 31, 4, 48, 32);
  await t.composition.jobs.runner.start();
  const created = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send({
    name: 'rvq', trainingSetId: setId, heldOutSetId: setId, patch: { width: 2, height: 2 }, bits: { from: 4, to: 5 }, maxIterations: 10, seed: 4,
    structure: 'residual', stages: 2, mBest: 4,
  });
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  runId = created.body.run.id;
  const tree = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send({
    name: 'tsvq', trainingSetId: setId, heldOutSetId: setId, patch: { width: 2, height: 2 }, bits: 3, maxIterations: 10, seed: 4, structure: 'tree',
  });
  expect(tree.status, JSON.stringify(tree.body)).toBe(201);
  treeRunId = tree.body.run.id;
  await untilEvaluated(t.app, team.engineer, runId);
  await untilEvaluated(t.app, team.engineer, treeRunId);
}, 240_000);

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('a residual run', () => {
  it('keeps one residual codebook per b, its table Σ 2^{b_s} codewords', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}`).set(bearer(team.viewer));
    expect(res.body.run.normalized.structure).toEqual({ kind: 'residual', stages: 2, mBest: 4, refinementPasses: 0 });
    const books = res.body.run.codebooks as { size: number; structure: string }[];
    expect(books.map((b) => b.structure)).toEqual(['residual', 'residual']);
    // b = 4: stages 2 + 2, 4 + 4 codewords; b = 5: stages 3 + 2, 8 + 4 codewords (vocabulary parseStages).
    expect(books.map((b) => b.size).sort((a, b) => a - b)).toEqual([8, 12]);
  });

  it('exports each as revision 2 with its stages and M-best search', async () => {
    const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    const residual = list.body.codebooks.filter((c: { structure: string }) => c.structure === 'residual');
    expect(residual).toHaveLength(2);
    const stages: number[][] = [];
    for (const summary of residual) {
      const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${summary.id}/export`).set(bearer(team.viewer));
      expect(exported.status).toBe(200);
      expect(exported.body).toMatchObject({ version: 2, structure: { kind: 'residual', search: { kind: 'm-best', m: 4 } } });
      const book = parseCodebook(exported.body);
      if (book.structure.kind === 'residual') stages.push(book.structure.bits);
    }
    expect(stages.sort((a, b) => a[0] - b[0])).toEqual([[2, 2], [3, 2]]);
  });

  it('shows each codebook\'s stages and index bits (Σ b_s, a tree\'s depth) on its page, not ceil(log2 K) of its table', async () => {
    const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    const details = [];
    for (const summary of list.body.codebooks) {
      const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${summary.id}`).set(bearer(team.viewer));
      expect(res.status).toBe(200);
      details.push([res.body.codebook.size, res.body.codebook.indexBits, res.body.codebook.stages]);
    }
    // 8 codewords (4 + 4) code 4 bits a block, 12 codewords (8 + 4) code 5: ceil(log2 12) = 4 would be wrong; the tree
    // run's 15 nodes code 3 path bits, not ceil(log2 15) = 4.
    expect(details.sort((a, b) => Number(a[0]) - Number(b[0]))).toEqual([[8, 4, [2, 2]], [12, 5, [3, 2]], [15, 3, null]]);
  });

  it('draws the curve at the fixed rate Σ b_s / (w·h) of each codebook', async () => {
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(curve.status).toBe(200);
    const points = curve.body.points as { structure: string; bppFixed: number }[];
    // Hand-computed: 4 and 5 bits per 2×2 block.
    expect(points.map((p) => [p.structure, p.bppFixed]).sort((a, b) => Number(a[1]) - Number(b[1]))).toEqual([['residual', 1], ['residual', 1.25]]);
  });

  it('trains a tree run into a balanced tree of depth b, drawn at b/(w·h) bpp', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${treeRunId}`).set(bearer(team.viewer));
    // Depth 3: 2^4 − 1 = 15 nodes in the table.
    expect(res.body.run.codebooks.map((b: { structure: string; size: number }) => [b.structure, b.size])).toEqual([['tree', 15]]);
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${treeRunId}/curve`).set(bearer(team.viewer));
    // Hand-computed: 3 path bits per 2×2 block.
    expect(curve.body.points.map((p: { bppFixed: number }) => p.bppFixed)).toEqual([3 / 4]);
  });

  it('reports the raw rate of the version 3 container a table-lookup decoder reads: Σ b_s or the depth in bits a block', async () => {
    const rawBySize = new Map<number, number[]>();
    for (const id of [runId, treeRunId]) {
      const metrics = await request(t.app).get(`/api/teams/${team.teamId}/runs/${id}/metrics`).set(bearer(team.viewer));
      expect(metrics.status).toBe(200);
      for (const c of metrics.body.codebooks as { size: number; images: { width: number; height: number; rawBytes: number; containerBytes: number }[] }[]) {
        for (const image of c.images) {
          expect([image.width, image.height]).toEqual([48, 32]);
          // The recorded file is the smallest payload kind, never above raw.
          expect(image.containerBytes).toBeLessThanOrEqual(image.rawBytes);
        }
        rawBySize.set(c.size, c.images.map((i) => i.rawBytes));
      }
    }
    // FORMAT.md by hand: 48 × 32 pixels in 2 × 2 blocks = 24 × 16 = 384 blocks behind a 72-byte version 3 header.
    // Stages 2 + 2 (8 codewords): 384 × 4 bits = 192 bytes → 264. Stages 3 + 2 (12): 384 × 5 / 8 = 240 → 312.
    // The depth-3 tree (15 nodes): 384 × 3 / 8 = 144 → 216. (Counting ceil(log2 K) bits behind 68 bytes gave 212, 260, 260.)
    expect(rawBySize.get(8)!.every((b) => b === 264)).toBe(true);
    expect(rawBySize.get(12)!.every((b) => b === 312)).toBe(true);
    expect(rawBySize.get(15)!.every((b) => b === 216)).toBe(true);
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${treeRunId}/curve`).set(bearer(team.viewer));
    expect(curve.body.points[0].bppRaw).toBeCloseTo((216 * 8) / (48 * 32), 12);
  });

  it('shows the decoder cost of residual stages searched M-best and of a balanced tree', async () => {
    const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    const costs = new Map<number, Record<string, unknown>>();
    for (const summary of list.body.codebooks) {
      const res = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${summary.id}`).set(bearer(team.viewer));
      costs.set(res.body.codebook.size, res.body.codebook.decoderCost);
    }
    // Stages 3 + 2 with M = 4, d = 4 (2 × 2 luma). Stage 0: 8 candidates, 32 multiply-adds; keeping the best 4 by
    // insertion, 0 + 1 + 2 + 3 = 6 comparisons for the first four and 4 each for the other 4: 22. Stage 1: 4 sums × 4
    // codewords = 16 candidates, 64 multiply-adds, 6 + 12 × 4 = 54 comparisons. Decoding adds stage 1's 4 components.
    expect(costs.get(12)).toMatchObject({
      encoderCodewords: 12, decoderCodewords: 12, encoderFloatBytes: 12 * 4 * 4, maxIndexBits: 5, maxBitsPerBlock: 5, fixedRate: true,
      perBlock: { encodeMultiplyAdds: 96, encodeComparisons: 76, decodeAdds: 4, decodeComparisons: 0 },
      perPixel: { encodeMultiplyAdds: 24, encodeComparisons: 19, decodeAdds: 1, decodeComparisons: 0 },
    });
    // The depth-3 tree: 3 levels × 2 children × 4 = 24 multiply-adds, 3 comparisons; the decoder tests 4 nodes for a
    // leaf and stores the 8 leaves (uint8: 8 × 4 = 32 bytes) and the 7 internal nodes' children (14 int16 = 28 bytes).
    expect(costs.get(15)).toMatchObject({
      encoderCodewords: 15, decoderCodewords: 8, maxIndexBits: 3, fixedRate: true,
      perBlock: { encodeMultiplyAdds: 24, encodeComparisons: 3, decodeAdds: 0, decodeComparisons: 4 },
      firmware: [{ type: 'uint8', codewordBytes: 32, structureBytes: 28 }],
    });
  });

  it.each([
    [{ structure: 'tree', stages: 2 }, 'stages'],
    [{ structure: 'residual', lambdas: [5] }, 'lambdas'],
    [{ structure: 'tree', bits: 14 }, 'bits'],
    [{ structure: 'residual', stages: 3, bits: 2 }, 'bits'],
  ])('refuses %j with 400 on its field', async (extra, field) => {
    const res = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send({
      name: 'bad', trainingImageIds: [1], heldOutImageIds: [2], patch: { width: 2, height: 2 }, bits: 4, ...extra,
    });
    expect(res.status).toBe(400);
    expect(JSON.stringify(res.body.error.details)).toContain(field);
  });
});
