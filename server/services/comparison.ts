import type { CompareRate, CompareResult, NormalizedRunConfig } from '../contracts';
import type { Database } from '../db';
import type { EvaluationOverall } from '../db/repositories/evaluations';
import { BdRateError, bjontegaard, type RdPoint } from '../engine/metrics/bd-rate';
import { notFound } from '../errors';

type FlatValue = string | number | boolean | null;

/** The normalised configuration as flat keys; image id lists become counts (their identity is the held-out hash). */
function flatten(normalized: NormalizedRunConfig | undefined): Record<string, FlatValue> {
  if (!normalized) return {};
  const out: Record<string, FlatValue> = {};
  const visit = (prefix: string, value: unknown) => {
    if (Array.isArray(value)) {
      if (prefix === 'trainingImageIds') out.trainingImages = value.length;
      else if (prefix === 'heldOutImageIds') out.heldOutImages = value.length;
      else out[prefix] = value.join(',');
    } else if (value !== null && typeof value === 'object') {
      for (const [k, v] of Object.entries(value)) visit(prefix ? `${prefix}.${k}` : k, v);
    } else {
      out[prefix] = value as FlatValue;
    }
  };
  visit('', normalized);
  return out;
}

const rateOf = (o: EvaluationOverall, rate: CompareRate) => (rate === 'fixed' ? o.bppFixed : rate === 'entropy' ? o.bppEntropy : o.bppActual);

function bd(reference: RdPoint[], test: RdPoint[]): { bdRate: number | null; bdPsnr: number | null; reason: string | null } {
  try {
    const r = bjontegaard(reference, test);
    const reason =
      r.bdRate === null && r.bdPsnr === null
        ? 'the curves share neither a rate nor a PSNR interval'
        : r.bdRate === null
          ? 'the curves share no PSNR interval'
          : r.bdPsnr === null
            ? 'the curves share no rate interval'
            : null;
    return { bdRate: r.bdRate, bdPsnr: r.bdPsnr, reason };
  } catch (err) {
    if (err instanceof BdRateError) return { bdRate: null, bdPsnr: null, reason: err.message };
    throw err;
  }
}

function span(values: number[]): [number, number] | null {
  const finite = values.filter(Number.isFinite);
  return finite.length ? [Math.min(...finite), Math.max(...finite)] : null;
}

export function createComparisonService(deps: { db: Database }) {
  const { db } = deps;
  return {
    /**
     * Runs side by side on one rate definition: their configurations (differing keys marked), curves on common axes,
     * BD-rate and BD-PSNR (Bjøntegaard, VCEG-M33) for every ordered pair measured on the same held-out images, and
     * each run against JPEG on its own held-out list. Pairs on different held-out images are never compared.
     */
    async compare(teamId: number, runIds: number[], rate: CompareRate): Promise<CompareResult> {
      const runs: CompareResult['runs'] = [];
      for (const id of runIds) {
        const run = await db.repos.runs.findForTeam(teamId, id);
        if (!run) throw notFound(`Run ${id}`);
        const color = run.normalized.color;
        const rows = await db.repos.evaluations.curveOfRun(run.id, run.heldOutHash);
        const jpeg = (await db.repos.baselines.list(run.heldOutHash, color)).filter((p) => p.codec === 'jpeg');
        runs.push({
          id: run.id,
          name: run.name,
          state: run.state,
          heldOutHash: run.heldOutHash,
          color,
          config: flatten(run.normalized),
          points: rows.map((r) => ({
            codebookId: r.codebookId,
            bits: r.bits,
            size: r.size,
            bpp: rateOf(r.overall, rate),
            mse: r.overall.mse,
            psnr: r.overall.psnr,
            ssim: r.overall.ssim,
          })),
          jpeg: jpeg.map((p) => ({ quality: p.quality, bpp: p.bpp, mse: p.mse, psnr: p.psnr, ssim: p.ssim })),
        });
      }

      const configKeys = [...new Set(runs.flatMap((r) => Object.keys(r.config)))].sort();
      const differingKeys = configKeys.filter((k) => new Set(runs.map((r) => JSON.stringify(r.config[k] ?? null))).size > 1);

      // An exact reconstruction (PSNR = ∞) has no place on a log-rate/PSNR fit; bjontegaard leaves such points out.
      const rd = (points: { bpp: number; psnr: number | null }[]): RdPoint[] => points.map((p) => ({ rate: p.bpp, psnr: p.psnr ?? Infinity }));
      const pairs: CompareResult['pairs'] = [];
      for (const reference of runs) {
        for (const test of runs) {
          if (reference === test) continue;
          const sameHeldOut = reference.heldOutHash === test.heldOutHash;
          const values = sameHeldOut
            ? bd(rd(reference.points), rd(test.points))
            : { bdRate: null, bdPsnr: null, reason: 'the runs were measured on different held-out images' };
          pairs.push({ reference: reference.id, test: test.id, sameHeldOut, ...values });
        }
      }
      const againstJpeg = runs.map((r) => ({
        runId: r.id,
        ...(r.jpeg.length === 0 ? { bdRate: null, bdPsnr: null, reason: 'no JPEG points for this held-out list yet' } : bd(rd(r.jpeg), rd(r.points))),
      }));

      const everything = runs.flatMap((r) => [...r.points, ...r.jpeg]);
      return {
        rate,
        runs,
        configKeys,
        differingKeys,
        axes: {
          bpp: span(everything.map((p) => p.bpp)),
          psnr: span(everything.map((p) => (p.psnr === null ? NaN : p.psnr))),
        },
        heldOutMismatch: new Set(runs.map((r) => r.heldOutHash)).size > 1,
        pairs,
        againstJpeg,
      };
    },
  };
}

export type ComparisonService = ReturnType<typeof createComparisonService>;
