// A greedy tree run from the studio (structure "tree", growth "greedy") trains through the real runner and job engine
// (Redis: REDIS_URL), is evaluated on its held-out images and exports an unbalanced, pruned tree per b.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { greedyTreePlan, parseCodebook, type Codebook } from '../../server/engine';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';
import { splitSeabedSet, untilEvaluated } from '../helpers/studio';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;
let runId: number;

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Greedy Team');
  const setId = await splitSeabedSet(t.app, team.engineer, 'Seabed tiles', 17, 4, 48, 32);
  await t.composition.jobs.runner.start();
  const created = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send({
    name: 'greedy tsvq', trainingSetId: setId, heldOutSetId: setId, patch: { width: 2, height: 2 }, bits: { from: 3, to: 4 }, maxIterations: 10, seed: 4,
    structure: 'tree', growth: 'greedy',
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

/** Leaves and the mean path length over the training vectors (usage counts the vectors reaching each node). */
function shape(book: Codebook): { leaves: number; meanPath: number; depths: Set<number> } {
  if (book.structure.kind !== 'tree') throw new Error('not a tree');
  const { children } = book.structure;
  const depth = new Int32Array(book.size);
  let leaves = 0;
  let bits = 0;
  const depths = new Set<number>();
  for (let t = 0; t < book.size; t++) {
    if (children[2 * t] < 0) {
      leaves++;
      bits += book.usage[t] * depth[t];
      depths.add(depth[t]);
    } else {
      depth[children[2 * t]] = depth[t] + 1;
      depth[children[2 * t + 1]] = depth[t] + 1;
    }
  }
  return { leaves, meanPath: bits / book.usage[0], depths };
}

describe('a greedy tree run', () => {
  it('records the growth the form chose', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}`).set(bearer(team.viewer));
    expect(res.body.run.normalized.structure).toEqual({ kind: 'tree', growth: 'greedy' });
    expect(res.body.run.codebooks.map((b: { structure: string }) => b.structure)).toEqual(['tree', 'tree']);
  });

  it('exports per b a tree pruned to a mean path of at most b bits on its training vectors, grown no larger than the plan allows', async () => {
    const res = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}`).set(bearer(team.viewer));
    const shapes = [];
    for (const summary of res.body.run.codebooks as { id: number }[]) {
      const exported = await request(t.app).get(`/api/teams/${team.teamId}/codebooks/${summary.id}/export`).set(bearer(team.viewer));
      expect(exported.status).toBe(200);
      shapes.push(shape(parseCodebook(exported.body)));
    }
    shapes.sort((a, b) => a.leaves - b.leaves);
    for (const [i, b] of [3, 4].entries()) {
      // Riskin & Gray 1991 grow past b; generalized BFOS prunes back along the hull to a mean path ≤ b.
      expect(shapes[i].meanPath).toBeLessThanOrEqual(b);
      expect(shapes[i].leaves).toBeLessThanOrEqual(greedyTreePlan(b).leaves);
    }
    // Unbalanced: leaves at several depths in at least one of them.
    expect(shapes.some((s) => s.depths.size > 1)).toBe(true);
  });

  it('is evaluated on its held-out images: a point of the curve per codebook with its PSNR', async () => {
    const curve = await request(t.app).get(`/api/teams/${team.teamId}/runs/${runId}/curve`).set(bearer(team.viewer));
    expect(curve.status).toBe(200);
    const points = curve.body.points as { structure: string; psnr: number | null; bppActual: number }[];
    expect(points).toHaveLength(2);
    for (const p of points) {
      expect(p.structure).toBe('tree');
      expect(p.psnr).toBeGreaterThan(10);
      expect(p.bppActual).toBeGreaterThan(0);
    }
  });

  it('refuses a growth without a tree with 400 on its field', async () => {
    const res = await request(t.app).post(`/api/teams/${team.teamId}/runs`).set(bearer(team.engineer)).send({
      name: 'bad', trainingImageIds: [1], heldOutImageIds: [2], patch: { width: 2, height: 2 }, bits: 4, structure: 'residual', growth: 'greedy',
    });
    expect(res.status).toBe(400);
    expect(JSON.stringify(res.body.error.details)).toContain('growth');
  });
});
