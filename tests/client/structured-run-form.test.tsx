import { cleanup, render, screen } from '@testing-library/react';
import { afterEach, describe, expect, it } from 'vitest';
import type { CreateRunBody, RunDetail } from '../../server/contracts';
import { StructureSummary, structureFigures } from '../../src/features/run-setup/components/structure-summary';
import { structureText } from '../../src/features/runs/components/run-config';
import { emptyRunForm, fromRunConfig, runFormSchema, toRunBody } from '../../src/features/run-setup/run-form-schema';

afterEach(cleanup);

describe('the run form\'s structure', () => {
  it('sends a residual structure with its stages, M and passes, and nothing for full search', () => {
    expect(toRunBody({ ...emptyRunForm, structure: 'residual', stages: 3, mBest: 4, refinementPasses: 1 })).toMatchObject({ structure: 'residual', stages: 3, mBest: 4, refinementPasses: 1 });
    // M = 1 is greedy search and 0 passes is none: the body leaves both out, as the server's defaults say.
    const greedy = toRunBody({ ...emptyRunForm, structure: 'residual', stages: 2, mBest: 1, refinementPasses: 0 });
    expect(greedy).toMatchObject({ structure: 'residual', stages: 2 });
    expect(greedy).not.toHaveProperty('mBest');
    expect(toRunBody({ ...emptyRunForm, structure: 'tree' })).toMatchObject({ structure: 'tree' });
    expect(toRunBody(emptyRunForm)).not.toHaveProperty('structure');
  });

  it('fills the fields from a stored residual run ("run again with changes")', () => {
    const config = { name: 'r', trainingSetId: 1, heldOutSetId: 1, patch: { width: 4, height: 4 }, bits: 8, structure: 'residual', stages: 4, mBest: 8 } as CreateRunBody;
    expect(fromRunConfig(config, 'again')).toMatchObject({ structure: 'residual', stages: 4, mBest: 8, refinementPasses: 0 });
  });

  it('names a tree too deep for the table on the bit budget', () => {
    const result = runFormSchema(new Map()).safeParse({ ...emptyRunForm, name: 'x', structure: 'tree', bits: 14 });
    expect(result.success).toBe(false);
    expect(result.error!.issues.find((i) => i.path[0] === 'bits')?.message).toContain('b at most 13');
  });

  it('costs each structure at b = 8 on 4×4 luma blocks (d = 16), by hand', () => {
    // Full search: 2^8 = 256 codewords, 256 · 16 = 4096 multiply-adds.
    expect(structureFigures('full', 8, 2, 1, 16)!.cost).toMatchObject({ tableCodewords: 256, encodeMultiplyAdds: 4096, maxIndexBits: 8 });
    // Balanced tree of depth 8: 2^9 − 1 = 511 nodes, two 16-component distances per level: 2 · 16 · 8 = 256.
    expect(structureFigures('tree', 8, 2, 1, 16)!.cost).toMatchObject({ tableCodewords: 511, encodeMultiplyAdds: 256, maxIndexBits: 8 });
    // Two residual stages of 4 bits: 16 + 16 codewords; greedy 16·16 + 16·16 = 512; M = 4 keeps 4 candidates: 256 + 4·256 = 1280.
    expect(structureFigures('residual', 8, 2, 1, 16)).toMatchObject({ stageBits: [4, 4], cost: { tableCodewords: 32, encodeMultiplyAdds: 512 } });
    expect(structureFigures('residual', 8, 2, 4, 16)!.cost.encodeMultiplyAdds).toBe(1280);
    expect(structureFigures('residual', 1, 2, 1, 16)).toBeNull();
  });

  it('shows the rate, table size and encoder cost of the chosen structure', () => {
    render(<StructureSummary structure="residual" bits={8} stages={2} mBest={1} dimension={16} pixelsPerBlock={16} />);
    const summary = screen.getByLabelText('Structure cost');
    // 8 bits over 16 pixels = 0.5 bpp.
    expect(summary.textContent).toContain('8 bits per block, 0.5000 bpp (stages 4 + 4)');
    expect(summary.textContent).toContain('32 codewords');
    expect(summary.textContent).toContain('512 multiply-adds per block');
  });
});

describe('the run form\'s greedy trees', () => {
  it('sends a greedy growth with a tree, and nothing for the default balanced one', () => {
    expect(toRunBody({ ...emptyRunForm, structure: 'tree', growth: 'greedy' })).toMatchObject({ structure: 'tree', growth: 'greedy' });
    expect(toRunBody({ ...emptyRunForm, structure: 'tree', growth: 'balanced' })).not.toHaveProperty('growth');
    // A growth left chosen while another structure is picked is not sent (the contract refuses it without a tree).
    expect(toRunBody({ ...emptyRunForm, structure: 'full', growth: 'greedy' })).not.toHaveProperty('growth');
    const config = { name: 'g', trainingSetId: 1, heldOutSetId: 1, patch: { width: 4, height: 4 }, bits: 8, structure: 'tree', growth: 'greedy' } as CreateRunBody;
    expect(fromRunConfig(config, 'again')).toMatchObject({ structure: 'tree', growth: 'greedy' });
    expect(runFormSchema(new Map()).safeParse({ ...emptyRunForm, name: 'x', structure: 'tree', growth: 'greedy', bits: 14 }).error!.issues.find((i) => i.path[0] === 'bits')?.message).toContain('b at most 13');
  });

  it('bounds a greedy tree\'s cost at b = 8 on 4×4 luma blocks (d = 16), by hand', () => {
    // Grown to at most 2^(8+1) = 512 leaves (1023 nodes) before pruning; any path at most 20 bits: 2 · 16 · 20 = 640.
    expect(structureFigures('tree', 8, 2, 1, 16, 'greedy')).toMatchObject({ bounded: true, cost: { tableCodewords: 1023, decoderCodewords: 512, encodeMultiplyAdds: 640, maxIndexBits: 20 } });
    render(<StructureSummary structure="tree" growth="greedy" bits={8} stages={2} mBest={1} dimension={16} pixelsPerBlock={16} />);
    const summary = screen.getByLabelText('Structure cost').textContent;
    // Pruned to a mean path of at most 8 bits: 0.5 bpp, 2 · 16 · 8 = 256 multiply-adds on average.
    expect(summary).toContain('at most 8 bits per block on average, 0.5000 bpp; a path at most 20 bits');
    expect(summary).toContain('at most 1\u202f023 codewords (decoder reads at most 512)');
    expect(summary).toContain('at most 256 multiply-adds per block on average, 640 on the longest path');
  });
});

describe('the run page\'s structure row', () => {
  const normalized: RunDetail['normalized'] = {
    trainingImageIds: [1], heldOutImageIds: [2], patch: { width: 4, height: 4 }, color: 'luma', meanBits: 0, bits: { from: 6, to: 8 }, sizes: [64, 128, 256],
    init: 'split', epsilon: 0.001, maxIterations: 20, maxVectors: 1000, seed: 1,
  };
  it('names the structure and the residual search the run trained with', () => {
    expect(structureText({ ...normalized })).toBe('Full search');
    expect(structureText({ ...normalized, structure: { kind: 'tree' } })).toBe('Tree-structured, balanced to depth b');
    expect(structureText({ ...normalized, structure: { kind: 'tree', growth: 'greedy' } })).toBe('Tree-structured, greedy, pruned to a mean path of b bits');
    expect(structureText({ ...normalized, structure: { kind: 'residual', stages: 2, mBest: 8, refinementPasses: 1 } })).toBe(
      'Residual (multistage): 2 stages sharing b, M-best search, M = 8, 1 refinement passes',
    );
  });
});
