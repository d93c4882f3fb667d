import { describe, expect, it } from 'vitest';
import {
  MIN_VECTORS_PER_CODEWORD, PLAN_PATCHES, PLAN_STRUCTURES, planRates, planTrainingVectors, type RateStructure,
} from '../../../server/contracts';

// Hand-computed cases of the fixed-length rule bpp = (b + m)/(w·h) (common practice for block VQ), the table size
// K·d·4 bytes of float32 (K = 2^b, d = w·h·channels) and vectors per codeword N/K.

const find = (rows: ReturnType<typeof planRates>, w: number, h: number, structure: string, meanBits = 0) =>
  rows.find((r) => r.patch.width === w && r.patch.height === h && r.structure === structure && r.meanBits === meanBits);

describe('planRates: the rate rule', () => {
  it('gives 4×4 full search b = 8 at 0.5 bpp: 8/16 bpp, 256 codewords, 16 KiB of float32', () => {
    const row = find(planRates({ targetBpp: 0.5, color: 'luma', images: [] }), 4, 4, 'full')!;
    expect(row).toMatchObject({ bits: 8, bpp: 0.5, codewords: 256, dimension: 16, tableBytes: 16_384, trainingVectors: null, vectorsPerCodeword: null, fewVectors: false });
  });

  it('gives 8×8 mean-removed with m = 6 at 0.25 bpp: b = 10, (10 + 6)/64 bpp, 1024 codewords of 64 components', () => {
    const row = find(planRates({ targetBpp: 0.25, color: 'luma', images: [] }), 8, 8, 'mean-removed', 6)!;
    expect(row).toMatchObject({ bits: 10, bpp: 0.25, codewords: 1024, tableBytes: 1024 * 64 * 4 });
  });

  it('takes the largest b that stays under the target: 4×4 at 0.3 bpp is b = 4 (0.25 bpp), within 10 % it is left out', () => {
    // 0.3 · 16 = 4.8 bits a block → b = 4 → 0.25 bpp, 16.7 % below the target: outside the default tolerance.
    expect(find(planRates({ targetBpp: 0.3, color: 'luma', images: [] }), 4, 4, 'full')).toBeUndefined();
    expect(find(planRates({ targetBpp: 0.3, color: 'luma', images: [], tolerance: 0.2 }), 4, 4, 'full')).toMatchObject({ bits: 4, bpp: 0.25 });
  });

  it('counts three components a pixel for RGB in the table, not in the rate', () => {
    const row = find(planRates({ targetBpp: 0.5, color: 'rgb', images: [] }), 4, 4, 'full')!;
    expect(row).toMatchObject({ bits: 8, bpp: 0.5, dimension: 48, tableBytes: 256 * 48 * 4 });
  });

  it('leaves out shapes the index bits cannot reach: 16×16 at 1 bpp would need b = 256', () => {
    const rows = planRates({ targetBpp: 1, color: 'luma', images: [] });
    expect(find(rows, 16, 16, 'full')).toBeUndefined();
    // 4×2 at 1 bpp: b = 8, exactly 1 bpp.
    expect(find(rows, 4, 2, 'full')).toMatchObject({ bits: 8, bpp: 1 });
    for (const r of rows) {
      expect(r.bpp).toBeLessThanOrEqual(1);
      expect(r.bpp).toBeGreaterThanOrEqual(0.9);
    }
  });

  it('lists the closest rate first, then the smaller table', () => {
    const rows = planRates({ targetBpp: 0.5, color: 'luma', images: [] });
    expect(rows[0].bpp).toBe(0.5);
    const exact = rows.filter((r) => r.bpp === 0.5);
    for (let i = 1; i < exact.length; i++) expect(exact[i].tableBytes).toBeGreaterThanOrEqual(exact[i - 1].tableBytes);
    // 2×2 with the mean in m = 2 bits and b = 0: (0 + 2)/4 = 0.5 bpp from one codeword of 4 components, 16 bytes,
    // the smallest exact table; 2×2 full search needs b = 2: 4 codewords, 64 bytes.
    expect(exact[0]).toMatchObject({ patch: { width: 2, height: 2 }, structure: 'mean-removed', meanBits: 2, bits: 0, tableBytes: 16 });
    expect(find(rows, 2, 2, 'full')).toMatchObject({ bits: 2, tableBytes: 64 });
  });

  it('gives nothing for a target that is not a positive number', () => {
    expect(planRates({ targetBpp: 0, color: 'luma', images: [] })).toEqual([]);
    expect(planRates({ targetBpp: Number.NaN, color: 'luma', images: [] })).toEqual([]);
  });

  it('takes a structure\u2019s own rate rule: an invented two-stage table of 2·2^b codewords at 2b bits a block', () => {
    const twoStage: RateStructure = { id: 'two-stage', label: 'Two stages', meanBits: [0], blockBits: (b) => 2 * b, codewords: (b) => 2 * 2 ** b };
    const rows = planRates({ targetBpp: 0.5, color: 'luma', images: [], structures: [twoStage], patches: [{ width: 4, height: 4 }] });
    // 2b ≤ 8 → b = 4: 8/16 = 0.5 bpp, 32 codewords.
    expect(rows).toEqual([expect.objectContaining({ structure: 'two-stage', bits: 4, bpp: 0.5, codewords: 32, tableBytes: 32 * 16 * 4 })]);
  });

  it('plans full search and mean removal with every mean bits from 1 to 8', () => {
    expect(PLAN_STRUCTURES.full.meanBits).toEqual([0]);
    expect(PLAN_STRUCTURES['mean-removed'].meanBits).toEqual([1, 2, 3, 4, 5, 6, 7, 8]);
    expect(PLAN_PATCHES).toContainEqual({ width: 8, height: 4 });
    expect(PLAN_PATCHES).toContainEqual({ width: 16, height: 16 });
  });
});

describe('planRates: tree and residual structures', () => {
  it('gives a balanced tree the full-search rate and a table of every node: 4×4 at 0.5 bpp is depth 8, 2^9 − 1 = 511 codewords', () => {
    const row = find(planRates({ targetBpp: 0.5, color: 'luma', images: [] }), 4, 4, 'tree')!;
    expect(row).toMatchObject({ bits: 8, bpp: 0.5, codewords: 511, tableBytes: 511 * 16 * 4 });
  });

  it('stops a tree at depth 13, whose 2^14 − 1 nodes are the largest table: 16×16 at 0.06 bpp (b ≤ 15.36) is depth 13', () => {
    expect(find(planRates({ targetBpp: 0.06, color: 'luma', images: [] }), 16, 16, 'tree')).toBeUndefined(); // 13/256 = 0.0508 is > 10 % under
    const row = find(planRates({ targetBpp: 0.052, color: 'luma', images: [] }), 16, 16, 'tree')!;
    expect(row).toMatchObject({ bits: 13, codewords: 2 ** 14 - 1 });
  });

  it('splits b over two residual stages as --stages 2 does: 4×4 at 0.5 bpp is 4 + 4 bits, 16 + 16 = 32 codewords', () => {
    const row = find(planRates({ targetBpp: 0.5, color: 'luma', images: [] }), 4, 4, 'residual')!;
    expect(row).toMatchObject({ bits: 8, bpp: 0.5, codewords: 32 });
  });

  it('counts the vectors per codeword of a residual row against its largest stage: 292 vectors over 2^5 at b = 9', () => {
    const rows = planRates({ targetBpp: 9 / 16, color: 'luma', images: [{ width: 64, height: 48 }, { width: 40, height: 40 }], patches: [{ width: 4, height: 4 }] });
    // b = 9 → stages 5 + 4 (parseStages gives the first stage the odd bit): tables 32 + 16 = 48; each vector trains every stage.
    expect(rows.find((r) => r.structure === 'residual')).toMatchObject({ bits: 9, codewords: 48, trainingVectors: 292, vectorsPerCodeword: 292 / 32 });
    // A tree's vectors end in its 2^9 leaves.
    expect(rows.find((r) => r.structure === 'tree')).toMatchObject({ bits: 9, codewords: 1023, vectorsPerCodeword: 292 / 512 });
  });
});

describe('planRates: training vectors per codeword', () => {
  const images = [{ width: 64, height: 48 }, { width: 40, height: 40 }];

  it('counts non-overlapping 4×4 patches: 16·12 + 10·10 = 292, then 292/256 per codeword at b = 8 is under the threshold', () => {
    expect(planTrainingVectors(images, { width: 4, height: 4 })).toBe(292);
    const row = find(planRates({ targetBpp: 0.5, color: 'luma', images }), 4, 4, 'full')!;
    expect(row.trainingVectors).toBe(292);
    expect(row.vectorsPerCodeword).toBeCloseTo(292 / 256, 12);
    expect(row.fewVectors).toBe(true);
  });

  it('counts overlapping patches at a stride of 2: 31·23 + 19·19 = 1074', () => {
    // (64 − 4)/2 + 1 = 31, (48 − 4)/2 + 1 = 23; (40 − 4)/2 + 1 = 19.
    expect(planTrainingVectors(images, { width: 4, height: 4 }, 2)).toBe(31 * 23 + 19 * 19);
  });

  it('caps the vectors at the vector cap', () => {
    expect(planTrainingVectors(images, { width: 4, height: 4 }, 2, 500)).toBe(500);
  });

  it('does not warn at exactly the threshold: 40 vectors a codeword', () => {
    expect(MIN_VECTORS_PER_CODEWORD).toBe(40);
    // One 80×32 image in 4×4 patches: 20·8 = 160 vectors; b = 2 at 4×4 is 2/16 = 0.125 bpp with 4 codewords → 40 each.
    const rows = planRates({ targetBpp: 0.125, color: 'luma', images: [{ width: 80, height: 32 }], patches: [{ width: 4, height: 4 }], structures: [PLAN_STRUCTURES.full] });
    expect(rows).toEqual([expect.objectContaining({ bits: 2, codewords: 4, trainingVectors: 160, vectorsPerCodeword: 40, fewVectors: false })]);
    const fewer = planRates({ targetBpp: 0.125, color: 'luma', images: [{ width: 80, height: 28 }], patches: [{ width: 4, height: 4 }], structures: [PLAN_STRUCTURES.full] });
    // 20·7 = 140 vectors → 35 a codeword.
    expect(fewer[0]).toMatchObject({ vectorsPerCodeword: 35, fewVectors: true });
  });
});
