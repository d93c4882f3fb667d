import type { RunCurve, RunMetrics } from '../contracts';
import { runCurveCsv, runMetricsCsv } from '../engine';

/** A run name as a file name: letters, digits, dot, dash and underscore only. */
function fileNameStem(name: string): string {
  const stem = name
    .normalize('NFKD')
    .replace(/[^A-Za-z0-9._-]+/g, '-')
    .replace(/^[-.]+|[-.]+$/g, '')
    .slice(0, 80);
  return stem || 'run';
}

export interface CsvFile {
  fileName: string;
  text: string;
}

/**
 * A run's rate–distortion curve as CSV, its codebooks and the reference codecs' points: the columns, units and
 * RFC 4180 writer of the command line's `sweep` (engine/metrics/evaluation-csv.ts), so the two files read alike.
 */
export function curveCsv(c: RunCurve): CsvFile {
  return { fileName: `${fileNameStem(c.run.name)}-curve.csv`, text: runCurveCsv(c) };
}

/** A run's per-image metrics as CSV, one line per codebook and held-out image, as `cellwright eval --csv` writes. */
export function metricsCsv(m: RunMetrics): CsvFile {
  return { fileName: `${fileNameStem(m.run.name)}-metrics.csv`, text: runMetricsCsv(m) };
}
