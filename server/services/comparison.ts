import type { BaselineCurves, BdMethod, BdTable, CompareRate, CompareResult, CompareSeries, NormalizedRunConfig } from '../contracts';
import type { Database } from '../db';
import type { EvaluationOverall, RunCurveRow } from '../db/repositories/evaluations';
import { BD_MIN_OVERLAP_FRACTION, BD_MIN_POINTS, CURVE_STRUCTURES, curveLabel, curveStructureOf, type StructureKind } from '../engine/vocabulary';
import { bdTableCsv } from '../engine/metrics/bd-table';
import { notFound } from '../errors';
import { againstEachCodec, BASELINE_CODECS, bdValuesOf, CODEC_NAMES, noBdValues, notEnoughPoints, rdPoints, usablePointCount } from './bd-figures';

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

/**
 * A run's evaluated codebooks as one curve per structure (CURVE_STRUCTURES order): a λ sweep by λ, largest first (its
 * rate rises as λ falls), every other structure by b.
 */
function seriesOfRun(runId: number, rows: readonly RunCurveRow[], rate: CompareRate): CompareSeries[] {
  const groups = new Map<string, RunCurveRow[]>();
  for (const row of rows) {
    const structure = curveStructureOf(row.structure as StructureKind, row.treeBalanced);
    groups.set(structure, [...(groups.get(structure) ?? []), row]);
  }
  return CURVE_STRUCTURES.filter((structure) => groups.has(structure)).map((structure) => {
    const members = [...groups.get(structure)!].sort((a, b) => (structure === 'entropy-constrained' ? (b.lambda ?? 0) - (a.lambda ?? 0) : a.bits - b.bits || a.size - b.size));
    const points = members.map((r) => ({
      codebookId: r.codebookId, bits: r.bits, size: r.size, lambda: r.lambda,
      bpp: rateOf(r.overall, rate), mse: r.overall.mse, psnr: r.overall.psnr, ssim: r.overall.ssim,
    }));
    const usablePoints = usablePointCount(points);
    return { id: `${runId}:${structure}`, runId, structure, meanBits: members[0].meanBits, label: curveLabel(structure, members[0].meanBits), points, usablePoints, enoughPoints: usablePoints >= BD_MIN_POINTS };
  });
}

/** A series as the BD table and the reasons name it: its run's name and its structure. */
const seriesName = (runName: string, series: CompareSeries) => `${runName} · ${series.label}`;

/**
 * BD figures of every ordered pair of series on the same held-out images, and of each series against the codecs of
 * its run's held-out list, each with the same method and shared-interval rule as the runs' own figures.
 */
function seriesFigures(runs: CompareResult['runs'], method: BdMethod): Pick<CompareResult, 'seriesPairs' | 'seriesAgainstBaselines'> {
  const all = runs.flatMap((run) => run.series.map((series) => ({ run, series, name: seriesName(run.name, series) })));
  const seriesPairs: CompareResult['seriesPairs'] = [];
  for (const reference of all) {
    for (const test of all) {
      if (reference === test) continue;
      const sameHeldOut = reference.run.heldOutHash === test.run.heldOutHash;
      const short = notEnoughPoints(reference.name, reference.series.points) ?? notEnoughPoints(test.name, test.series.points);
      const values = !sameHeldOut
        ? noBdValues(method, 'the runs were measured on different held-out images')
        : short !== null
          ? noBdValues(method, short)
          : bdValuesOf(rdPoints(reference.series.points), rdPoints(test.series.points), method);
      seriesPairs.push({ reference: reference.series.id, test: test.series.id, sameHeldOut, ...values });
    }
  }
  const seriesAgainstBaselines = all.flatMap(({ run, series, name }) => {
    const short = notEnoughPoints(name, series.points);
    return againstEachCodec(series.points, run.baselines, method).map((values) => ({
      seriesId: series.id,
      runId: run.id,
      ...(short !== null ? { ...noBdValues(method, short), codec: values.codec } : values),
    }));
  });
  return { seriesPairs, seriesAgainstBaselines };
}

export function createComparisonService(deps: { db: Database }) {
  const { db } = deps;
  return {
    /**
     * Runs side by side on one rate definition: their configurations (differing keys marked), curves on common axes,
     * BD-rate and BD-PSNR (Bjøntegaard, VCEG-M33; curves drawn by `method`) for every ordered pair measured on the same
     * held-out images, and each run against JPEG, WebP and AVIF on its own held-out list; the same again per structure
     * series (each run's codebooks grouped by CURVE_STRUCTURES). Pairs on different held-out images are never compared.
     */
    async compare(teamId: number, runIds: number[], rate: CompareRate, method: BdMethod): Promise<CompareResult> {
      const runs: CompareResult['runs'] = [];
      for (const id of runIds) {
        const run = await db.repos.runs.findForTeam(teamId, id);
        if (!run) throw notFound(`Run ${id}`);
        const color = run.normalized.color;
        // `points` stays the run's full-search curve (the run-to-run figures below); every structure is a series of its own.
        const all = await db.repos.evaluations.curveOfRun(run.id, run.heldOutHash);
        const rows = all.filter((r) => r.structure === 'full');
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
          series: seriesOfRun(run.id, all, rate),
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

      const everything = runs.flatMap((r) => [...r.series.flatMap((series) => series.points), ...BASELINE_CODECS.flatMap((c) => r.baselines[c])]);
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
        ...seriesFigures(runs, method),
        bdMinPoints: BD_MIN_POINTS,
      };
    },

    /**
     * The Bjøntegaard table of a comparison, as JSON or as an RFC 4180 file (server/engine/metrics/bd-table.ts): one
     * row per ordered pair of series and per series against each codec, each curve named by its run and structure.
     */
    async bdTable(teamId: number, runIds: number[], rate: CompareRate, method: BdMethod): Promise<BdTable> {
      const result = await this.compare(teamId, runIds, rate, method);
      const named = new Map(result.runs.flatMap((run) => run.series.map((series) => [series.id, { name: seriesName(run.name, series), runId: run.id }] as const)));
      const rows: BdTable['rows'] = [
        ...result.seriesPairs.map(({ reference, test, sameHeldOut: _, ...values }) => ({
          ...values, reference: named.get(reference)!.name, test: named.get(test)!.name, referenceRunId: named.get(reference)!.runId, testRunId: named.get(test)!.runId,
          codec: null, referenceSeries: reference, testSeries: test,
        })),
        ...result.seriesAgainstBaselines.map(({ seriesId, runId, codec, ...values }) => ({
          ...values, reference: CODEC_NAMES[codec], test: named.get(seriesId)!.name, referenceRunId: null, testRunId: runId, codec, referenceSeries: null, testSeries: seriesId,
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

