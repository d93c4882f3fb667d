import type { BaselineCurves, BdMethod, BdTable, CompareRate, CompareResult, NormalizedRunConfig } from '../contracts';
import type { Database } from '../db';
import type { EvaluationOverall } from '../db/repositories/evaluations';
import { BD_MIN_OVERLAP_FRACTION } from '../engine/vocabulary';
import { bdTableCsv } from '../engine/metrics/bd-table';
import { notFound } from '../errors';
import { againstEachCodec, BASELINE_CODECS, bdValuesOf, CODEC_NAMES, noBdValues, rdPoints } from './bd-figures';

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

function span(values: number[]): [number, number] | null {
  const finite = values.filter(Number.isFinite);
  return finite.length ? [Math.min(...finite), Math.max(...finite)] : null;
}

export function createComparisonService(deps: { db: Database }) {
  const { db } = deps;
  return {
    /**
     * Runs side by side on one rate definition: their configurations (differing keys marked), curves on common axes,
     * BD-rate and BD-PSNR (Bjøntegaard, VCEG-M33; curves drawn by `method`) for every ordered pair measured on the same
     * held-out images, and each run against JPEG, WebP and AVIF on its own held-out list. Pairs on different held-out
     * images are never compared.
     */
    async compare(teamId: number, runIds: number[], rate: CompareRate, method: BdMethod): Promise<CompareResult> {
      const runs: CompareResult['runs'] = [];
      for (const id of runIds) {
        const run = await db.repos.runs.findForTeam(teamId, id);
        if (!run) throw notFound(`Run ${id}`);
        const color = run.normalized.color;
        // A run's full-search codebooks form its curve here; its entropy-constrained ones (a λ sweep) are another
        // curve, which the run page draws and the compare page does not yet.
        const rows = (await db.repos.evaluations.curveOfRun(run.id, run.heldOutHash)).filter((r) => r.structure === 'full');
        const baselines: BaselineCurves = { jpeg: [], webp: [], avif: [] };
        for (const p of await db.repos.baselines.list(run.heldOutHash, color)) {
          baselines[p.codec].push({ quality: p.quality, bpp: p.bpp, mse: p.mse, psnr: p.psnr, ssim: p.ssim });
        }
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
          baselines,
        });
      }

      const configKeys = [...new Set(runs.flatMap((r) => Object.keys(r.config)))].sort();
      const differingKeys = configKeys.filter((k) => new Set(runs.map((r) => JSON.stringify(r.config[k] ?? null))).size > 1);

      const pairs: CompareResult['pairs'] = [];
      for (const reference of runs) {
        for (const test of runs) {
          if (reference === test) continue;
          const sameHeldOut = reference.heldOutHash === test.heldOutHash;
          const values = sameHeldOut
            ? bdValuesOf(rdPoints(reference.points), rdPoints(test.points), method)
            : noBdValues(method, 'the runs were measured on different held-out images');
          pairs.push({ reference: reference.id, test: test.id, sameHeldOut, ...values });
        }
      }
      const againstBaselines = runs.flatMap((r) => againstEachCodec(r.points, r.baselines, method).map((values) => ({ runId: r.id, ...values })));

      const everything = runs.flatMap((r) => [...r.points, ...BASELINE_CODECS.flatMap((c) => r.baselines[c])]);
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
        method,
        againstBaselines,
      };
    },

    /** The Bjøntegaard table of a comparison, as JSON or as an RFC 4180 file (server/engine/metrics/bd-table.ts). */
    async bdTable(teamId: number, runIds: number[], rate: CompareRate, method: BdMethod): Promise<BdTable> {
      const result = await this.compare(teamId, runIds, rate, method);
      const name = new Map(result.runs.map((r) => [r.id, r.name]));
      const rows: BdTable['rows'] = [
        ...result.pairs.map(({ reference, test, sameHeldOut: _, ...values }) => ({
          ...values, reference: name.get(reference)!, test: name.get(test)!, referenceRunId: reference, testRunId: test, codec: null,
        })),
        ...result.againstBaselines.map(({ runId, codec, ...values }) => ({
          ...values, reference: CODEC_NAMES[codec], test: name.get(runId)!, referenceRunId: null, testRunId: runId, codec,
        })),
      ];
      return { rate, method, minOverlapFraction: BD_MIN_OVERLAP_FRACTION, rows };
    },

    /** The table as CSV, in the columns the command line's `bd` writes. */
    bdTableCsv(table: BdTable): string {
      return bdTableCsv(table.rows.map((r) => ({ ...r, rate: table.rate })));
    },
  };
}

export type ComparisonService = ReturnType<typeof createComparisonService>;

