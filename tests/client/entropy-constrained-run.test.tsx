import { describe, expect, it } from 'vitest';
import type { CreateRunBody, RunCurve } from '../../server/contracts';
import { emptyRunForm, fromRunConfig, runFormSchema, toRunBody } from '../../src/features/run-setup/run-form-schema';
import { curveSeries } from '../../src/features/runs/components/rd-panel';

const figures = (bpp: number) => ({ bppFixed: bpp + 0.1, bppEntropy: bpp - 0.05, bppActual: bpp, bppRaw: bpp + 0.12, mse: 50 / bpp, psnr: 30 + bpp, ssim: 0.9, lossless: false });

const curve: RunCurve = {
  run: { id: 3, name: 'λ sweep', state: 'succeeded' },
  heldOutHash: 'b'.repeat(64),
  color: 'luma',
  bd: { method: 'pchip', againstBaselines: [] },
  points: [
    { codebookId: 1, bits: 5, size: 32, structure: 'full', lambda: null, ...figures(1.3) },
    { codebookId: 2, bits: 5, size: 30, structure: 'entropy-constrained', lambda: 10, ...figures(1.1) },
    { codebookId: 3, bits: 3, size: 6, structure: 'entropy-constrained', lambda: 500, ...figures(0.4) },
    { codebookId: 4, bits: 4, size: 12, structure: 'entropy-constrained', lambda: 100, ...figures(0.7) },
  ],
  baselines: { jpeg: [], webp: [], avif: [] },
};

describe('an entropy-constrained run on the rate–distortion chart', () => {
  it('draws the λ sweep as a curve of its own, apart from the full-search series', () => {
    const series = curveSeries(curve, 'psnr');
    expect(series.map((s) => s.id)).toEqual(['fixed', 'entropy', 'actual', 'raw', 'ecvq-entropy', 'ecvq-actual']);
    expect(series[2].points.map((p) => p.target)).toEqual(['1']);
    // Largest λ first: the curve runs from the lowest rate up.
    expect(series[5].points.map((p) => p.label)).toEqual(['λ = 500 (K = 6)', 'λ = 100 (K = 12)', 'λ = 10 (K = 30)']);
    expect(series[5].points.map((p) => p.x)).toEqual([0.4, 0.7, 1.1]);
  });

  it('draws no λ series for a run without entropy-constrained codebooks', () => {
    const plain = { ...curve, points: curve.points.slice(0, 1) };
    expect(curveSeries(plain, 'psnr').map((s) => s.id)).toEqual(['fixed', 'entropy', 'actual', 'raw']);
  });
});

describe('the run form\'s λ list', () => {
  const catalog: Parameters<typeof runFormSchema>[0] = new Map();

  it('sends the parsed λ values, a log-spaced range expanded', () => {
    expect(toRunBody({ ...emptyRunForm, lambdas: '10..1000:3' }).lambdas).toEqual([10, 100, 1000]);
    expect(toRunBody({ ...emptyRunForm, lambdas: ' 50, 200 ' }).lambdas).toEqual([50, 200]);
    expect(toRunBody({ ...emptyRunForm, lambdas: '' })).not.toHaveProperty('lambdas');
  });

  it('names a malformed λ list on its field', () => {
    const result = runFormSchema(catalog).safeParse({ ...emptyRunForm, name: 'x', lambdas: '5,abc' });
    expect(result.success).toBe(false);
    const issue = result.error!.issues.find((i) => i.path[0] === 'lambdas');
    expect(issue?.message).toBe('λ list: λ takes numbers from 0 to 1000000000, comma-separated, or a range A..B:N, got "5,abc"');
  });

  it('fills the field from a stored run\'s λ values ("run again with changes")', () => {
    const config = { name: 'r', trainingSetId: 1, heldOutSetId: 1, patch: { width: 4, height: 4 }, bits: 6, lambdas: [20, 400] } as CreateRunBody;
    expect(fromRunConfig(config, 'again').lambdas).toBe('20,400');
  });
});
