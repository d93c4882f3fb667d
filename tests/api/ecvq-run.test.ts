// A run with a λ list trains entropy-constrained codebooks beside its full-search ones, through the real runner and
// job engine, and the studio stores, lists, evaluates and exports them with their structure.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { kraftSum, parseCodebook } from '../../server/engine';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
import { splitSeabedSet, untilEvaluated } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let runId: number;
const LAMBDAS = [20, 400];

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Entropy Team');
  const setId = await splitSeabedSet(t.app, team.engineer, 'Seabed tiles', 31, 4, 48, 32);
  await t.composition.jobs.runner.start();
  const created = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send({
    name: 'ecvq', trainingSetId: setId, heldOutSetId: setId, patch: { width: 2, height: 2 }, bits: 5, maxIterations: 10, seed: 4, lambdas: LAMBDAS,
  });
  expect(created.status, JSON.stringify(created.body)).toBe(201);
  runId = created.body.run.id;
  await untilEvaluated(t.app, team.engineer, runId);
}, 240_000);

afterAll(async () => {
  await t?.composition.jobs.runner.stop();
  await t?.composition.jobs.pool.destroy();
  await t?.close();
});

describe('a run with a λ list', () => {
  it('keeps the full-search codebook and one entropy-constrained codebook per λ, listed with structure and λ', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}`).set(bearer(team.viewer));
    expect(res.body.run.normalized.lambdas).toEqual(LAMBDAS);
    const books = res.body.run.codebooks as { size: number; structure: string; lambda: number | null }[];
    expect(books.filter((b) => b.structure === 'full').map((b) => b.size)).toEqual([32]);
    const ecvq = LAMBDAS.map((l) => books.find((b) => b.lambda === l)!);
    expect(ecvq.map((b) => b.structure)).toEqual(['entropy-constrained', 'entropy-constrained']);
    // A larger λ prices bits higher: no more codewords survive.
    expect(ecvq[1].size).toBeLessThanOrEqual(ecvq[0].size);
  });

  it('exports each entropy-constrained codebook as revision 2 with a complete Huffman code', async () => {
    const list = await request(t.app).get(`/api/teams/${team.teamId}/codebooks`).set(bearer(team.viewer));
    for (const summary of list.body.codebooks.filter((c: { structure: string }) => c.structure === 'entropy-constrained')) {
      const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${summary.id}/export`).set(bearer(team.viewer));
      expect(exported.status).toBe(200);
      expect(exported.body).toMatchObject({ version: 2, structure: { kind: 'entropy-constrained', lambda: summary.lambda } });
      const book = parseCodebook(exported.body);
      // Kraft equality of a complete prefix code (Cover & Thomas, Elements of Information Theory, Thm 5.2.1).
      if (book.structure.kind === 'entropy-constrained' && book.size > 1) expect(kraftSum(book.structure.codeLengths)).toBe(1);
    }
  });

  it('draws the curve with a point per codebook, each with its structure, measured on the Huffman-coded files', async () => {
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(curve.status).toBe(200);
    const points = curve.body.points as { codebookId: number; structure: string; lambda: number | null }[];
    expect(points.map((p) => p.structure).sort()).toEqual(['entropy-constrained', 'entropy-constrained', 'full']);
    const metrics = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/metrics`).set(bearer(team.viewer));
    expect(metrics.status).toBe(200);
    for (const p of points.filter((q) => q.structure === 'entropy-constrained')) {
      const images = metrics.body.codebooks.find((c: { codebookId: number }) => c.codebookId === p.codebookId).images as { containerBytes: number; width: number; height: number; bppEntropy: number }[];
      expect(images.length).toBeGreaterThan(0);
      for (const image of images) {
        // The file is the 72-byte version 3 header, the 4-byte stream length and the Huffman code (zero-padded to a byte):
        // the code part is never shorter than the image's own index entropy, since any prefix code's lengths satisfy
        // Kraft's inequality (Cover & Thomas, Elements of Information Theory, Thm 5.3.1).
        const codeBits = (image.containerBytes - 76) * 8;
        expect(codeBits).toBeGreaterThanOrEqual(image.bppEntropy * image.width * image.height - 1e-6);
      }
    }
  });

  it('reports the written file as the raw rate and the longest Huffman code as the decoder cost', async () => {
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    const metrics = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/metrics`).set(bearer(team.viewer));
    for (const p of (curve.body.points as { codebookId: number; structure: string; size: number; bppRaw: number; bppActual: number }[]).filter((q) => q.structure === 'entropy-constrained')) {
      // A Huffman-coded stream is stored raw whatever payload is asked for (FORMAT.md, "Version 3: index layouts"), so
      // the file the evaluation wrote is the raw container: not ceil(log2 K) bits a block behind a 68-byte header.
      expect(p.bppRaw).toBeCloseTo(p.bppActual, 12);
      const images = metrics.body.codebooks.find((c: { codebookId: number }) => c.codebookId === p.codebookId).images as { containerBytes: number; rawBytes: number }[];
      for (const image of images) expect(image.rawBytes).toBe(image.containerBytes);
      const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${p.codebookId}/export`).set(bearer(team.viewer));
      const longest = Math.max(...(exported.body.structure.codeLengths as number[]));
      const detail = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${p.codebookId}`).set(bearer(team.viewer));
      // d = 4 (2 × 2 luma): K·4 multiply-adds and K − 1 comparisons to encode, one comparison a code bit to decode.
      expect(detail.body.codebook.decoderCost).toMatchObject({
        structure: 'entropy-constrained', pixelsPerBlock: 4, maxIndexBits: longest, maxBitsPerBlock: longest, fixedRate: false,
        perBlock: { encodeMultiplyAdds: 4 * p.size, encodeComparisons: p.size - 1, decodeAdds: 0, decodeComparisons: longest },
        firmware: [{ type: 'uint8', codewordBytes: 4 * p.size }],
      });
    }
  });
});
