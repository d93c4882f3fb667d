import type {
  BaselineCurves,
  CodebookEvaluations,
  EvaluateCodebookBody,
  ImageMetrics,
  JobProgress,
  RunCurve,
  RunMetrics,
} from '../contracts';
import type { Database, Repositories } from '../db';
import type { CodebookWithCodewords } from '../db/repositories/codebooks';
import type { EvaluationImageMetrics, EvaluationOverall } from '../db/repositories/evaluations';
import type { RunImageRecord, RunRecord } from '../db/repositories/runs';
import { badRequest, notFound } from '../errors';
import { heldOutHash as heldOutHashOf } from '../jobs/held-out-hash';
import type {
  BaselineResultPoint,
  EvaluateResult,
  EvaluateTask,
  TaskCodebook,
  TaskImage,
} from '../jobs/tasks/evaluate.task';
import { recordAudit } from './audit';

/** Runs one evaluation task off the request loop (the job pool); aborting the signal abandons the task. */
export type EvaluationTaskRunner = (task: EvaluateTask, signal?: AbortSignal) => Promise<unknown>;

export interface EvaluationDeps {
  db: Database;
  /** Where stored originals live (the content store). */
  store: { path(sha256: string): string };
  runTask: EvaluationTaskRunner;
  /** Wakes the job runner after a job was queued (it also polls). */
  jobQueued?: () => void;
}

/** What an evaluate job carries when it is not a run's: the codebook and the image list it is measured on. */
export interface EvaluationJobInput {
  id: number;
  teamId: number;
  runId: number | null;
  codebookId: number | null;
  payload: Record<string, unknown> | null;
}

export interface EvaluationJobContext {
  signal: AbortSignal;
  progress(p: JobProgress): void;
  /**
   * Runs the final writes in one transaction; the job runner passes one that also marks the job succeeded, so
   * results and success commit together. Defaults to a plain transaction.
   */
  commit?(work: (tx: Repositories) => Promise<void>): Promise<void>;
}

/**
 * A baseline sweep costs about as much as this many codebook evaluations on the same images (three codecs at eleven
 * qualities, each encoded, decoded and measured); used only to spread the progress fraction.
 */
const BASELINE_WEIGHT = 4;

/** A stored codebook as the evaluation tasks take it. */
export function toTaskCodebook(c: CodebookWithCodewords): TaskCodebook {
  const meta = c.metadata as { training?: TaskCodebook['training']; preprocessing?: TaskCodebook['preprocessing'] };
  return {
    size: c.size,
    dimension: c.dimension,
    patch: { width: c.patch.width, height: c.patch.height, channels: c.channels, color: c.color },
    preprocessing: meta.preprocessing ?? (c.meanBits > 0 ? { kind: 'mean-removed', meanBits: c.meanBits } : { kind: 'none' }),
    codewords: c.codewords,
    usage: c.usage,
    training: meta.training as TaskCodebook['training'],
    checksum: c.checksum,
  };
}

const lossless = (psnr: number | null, mse: number) => psnr === null && mse === 0;

function toImageMetrics(m: EvaluationImageMetrics, image: { fileName: string; width: number; height: number }): ImageMetrics {
  return {
    imageId: m.imageId,
    fileName: image.fileName,
    width: image.width,
    height: image.height,
    containerBytes: m.containerBytes,
    bppFixed: m.bppFixed,
    bppEntropy: m.bppEntropy,
    bppActual: m.bppActual,
    mse: m.mse,
    psnr: m.psnr,
    ssim: m.ssim,
    lossless: lossless(m.psnr, m.mse),
  };
}

/** Quotes a CSV field (RFC 4180) and defuses leading characters spreadsheets would run as a formula. */
function csvField(value: string | number | null): string {
  if (value === null) return '';
  if (typeof value === 'number') return Number.isFinite(value) ? String(value) : value > 0 ? 'inf' : '-inf';
  const text = /^[=+\-@\t\r]/.test(value) ? `'${value}` : value;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** Header (units in parentheses) and rows, CRLF line ends as RFC 4180 writes them. */
const csv = (header: string[], rows: (string | number | null)[][]) =>
  [header.join(','), ...rows.map((r) => r.map(csvField).join(','))].join('\r\n') + '\r\n';

/** A run name as a file name: letters, digits, dot, dash and underscore only. */
function fileNameStem(name: string): string {
  const stem = name
    .normalize('NFKD')
    .replace(/[^A-Za-z0-9._-]+/g, '-')
    .replace(/^[-.]+|[-.]+$/g, '')
    .slice(0, 80);
  return stem || 'run';
}

/** PSNR null in CSV means an exact reconstruction: written as inf (dB), the value it stands for. */
const csvPsnr = (psnr: number | null, mse: number) => (psnr === null && mse === 0 ? Infinity : psnr);

export function createEvaluationService(deps: EvaluationDeps) {
  const { db } = deps;

  const taskImages = (images: RunImageRecord[]): TaskImage[] =>
    images.map((i) => ({ path: deps.store.path(i.sha256), name: i.fileName, width: i.width, height: i.height }));

  async function runOf(teamId: number, runId: number): Promise<RunRecord> {
    const run = await db.repos.runs.findForTeam(teamId, runId);
    if (!run) throw notFound('Run');
    return run;
  }

  async function baselineCurves(heldOutHash: string, color: 'luma' | 'rgb' | null): Promise<BaselineCurves> {
    const out: BaselineCurves = { jpeg: [], webp: [], avif: [] };
    if (!color) return out;
    for (const p of await db.repos.baselines.list(heldOutHash, color)) {
      out[p.codec].push({ quality: p.quality, bpp: p.bpp, mse: p.mse, psnr: p.psnr, ssim: p.ssim });
    }
    return out;
  }

  /**
   * Measures codebooks on one held-out list and fills the reference codec cache for it when empty. Everything measured
   * is written in one transaction at the end, so a cancelled or crashed job leaves the earlier results as they were.
   */
  async function measure(
    codebooks: CodebookWithCodewords[],
    images: RunImageRecord[],
    heldOutHash: string,
    color: 'luma' | 'rgb',
    ctx: EvaluationJobContext,
  ): Promise<void> {
    if (images.length === 0) throw badRequest('There are no held-out images to evaluate on');
    const inputs = taskImages(images);
    const needBaselines = (await db.repos.baselines.count(heldOutHash, color)) === 0;
    const total = codebooks.length + (needBaselines ? BASELINE_WEIGHT : 0);
    const targetSize = codebooks.reduce((m, c) => Math.max(m, c.size), 0);
    const results: { codebook: CodebookWithCodewords; result: EvaluateResult }[] = [];
    for (const [n, codebook] of codebooks.entries()) {
      ctx.signal.throwIfAborted();
      ctx.progress({ phase: 'evaluating', size: codebook.size, targetSize, fraction: n / total, message: `codebook of ${codebook.size} on ${images.length} images` });
      const result = (await deps.runTask({ op: 'evaluate', codebook: toTaskCodebook(codebook), images: inputs }, ctx.signal)) as EvaluateResult;
      results.push({ codebook, result });
    }
    let points: BaselineResultPoint[] = [];
    if (needBaselines) {
      ctx.signal.throwIfAborted();
      ctx.progress({ phase: 'baselines', fraction: codebooks.length / total, message: 'reference codecs on the held-out images' });
      points = (await deps.runTask({ op: 'baselines', images: inputs, color }, ctx.signal)) as BaselineResultPoint[];
    }
    ctx.signal.throwIfAborted();
    ctx.progress({ phase: 'saving', fraction: 1 });
    const commit = ctx.commit ?? ((work) => db.transaction(work));
    await commit(async (tx) => {
      for (const { codebook, result } of results) {
        const rows: EvaluationImageMetrics[] = result.images.map((m, i) => ({
          imageId: images[i].id,
          mse: m.mse,
          psnr: m.psnr,
          ssim: m.ssim,
          bppFixed: m.bppFixed,
          bppEntropy: m.bppEntropy,
          bppActual: m.bppActual,
          containerBytes: m.bytes,
        }));
        const overall: EvaluationOverall = { ...result.overall };
        await tx.evaluations.replace(codebook.id, heldOutHash, overall, rows);
      }
      await tx.baselines.insertMissing(heldOutHash, color, points);
    });
  }

  async function resolveImages(repos: Repositories, teamId: number, body: EvaluateCodebookBody): Promise<RunImageRecord[]> {
    if (body.heldOutSetId !== undefined) {
      const images = await repos.runs.setImages(teamId, body.heldOutSetId);
      if (!images) throw notFound('Image set');
      if (images.length === 0) throw badRequest('The image set has no images', { field: 'heldOutSetId' });
      return images;
    }
    const ids = [...new Set(body.heldOutImageIds!)];
    const images = await repos.runs.teamImages(teamId, ids);
    if (images.length !== ids.length) {
      const found = new Set(images.map((i) => i.id));
      throw notFound(`Image ${ids.filter((id) => !found.has(id)).join(', ')}`);
    }
    return images;
  }

  async function curve(teamId: number, runId: number): Promise<RunCurve> {
    const run = await runOf(teamId, runId);
    // Independent reads: issued together so the request waits for one round trip, not two.
    const [rows, baselines] = await Promise.all([
      db.repos.evaluations.curveOfRun(run.id, run.heldOutHash),
      baselineCurves(run.heldOutHash, run.normalized?.color ?? null),
    ]);
    return {
      run: { id: run.id, name: run.name, state: run.state },
      heldOutHash: run.heldOutHash,
      color: run.normalized?.color ?? null,
      points: rows.map((r) => ({
        codebookId: r.codebookId,
        bits: r.bits,
        size: r.size,
        bppFixed: r.overall.bppFixed,
        bppEntropy: r.overall.bppEntropy,
        bppActual: r.overall.bppActual,
        mse: r.overall.mse,
        psnr: r.overall.psnr,
        ssim: r.overall.ssim,
        lossless: lossless(r.overall.psnr, r.overall.mse),
      })),
      baselines,
    };
  }

  async function metrics(teamId: number, runId: number): Promise<RunMetrics> {
    const run = await runOf(teamId, runId);
    const rows = await db.repos.evaluations.imageMetricsOfRun(run.id, run.heldOutHash);
    const byCodebook = new Map<number, RunMetrics['codebooks'][number]>();
    for (const r of rows) {
      let entry = byCodebook.get(r.codebookId);
      if (!entry) byCodebook.set(r.codebookId, (entry = { codebookId: r.codebookId, bits: r.bits, size: r.size, images: [] }));
      entry.images.push(toImageMetrics(r, r));
    }
    return { run: { id: run.id, name: run.name, state: run.state }, heldOutHash: run.heldOutHash, codebooks: [...byCodebook.values()] };
  }

  return {
    curve,
    metrics,

    /** The evaluate job: every codebook of its run on the run's held-out images, or one codebook on the list it names. */
    async runJob(job: EvaluationJobInput, ctx: EvaluationJobContext): Promise<void> {
      if (job.runId !== null) {
        const run = await db.repos.runs.findById(job.runId);
        if (!run) throw new Error(`run ${job.runId} no longer exists`);
        const codebooks = await db.repos.codebooks.listForRunWithCodewords(run.id);
        if (codebooks.length === 0) throw new Error('the run has no codebooks to evaluate');
        const images = await db.repos.runs.imagesOf(run.id, 'held-out');
        await measure(codebooks, images, run.heldOutHash, run.normalized.color, ctx);
        return;
      }
      if (job.codebookId === null) throw new Error('an evaluate job names neither a run nor a codebook');
      const codebook = await db.repos.codebooks.findById(job.codebookId);
      if (!codebook) throw new Error(`codebook ${job.codebookId} no longer exists`);
      const ids = (job.payload?.heldOutImageIds ?? []) as number[];
      const images = await db.repos.runs.teamImages(job.teamId, ids);
      if (images.length !== ids.length) throw new Error('some of the images to evaluate on were deleted');
      await measure([codebook], images, heldOutHashOf(images.map((i) => i.sha256)), codebook.color, ctx);
    },

    /** Queues an evaluation of one codebook (typically imported) on a held-out list of the team. */
    async requestEvaluation(teamId: number, actorUserId: number, codebookId: number, body: EvaluateCodebookBody) {
      const queued = await db.transaction(async (tx) => {
        const codebook = await tx.codebooks.findForTeam(teamId, codebookId);
        if (!codebook) throw notFound('Codebook');
        const images = await resolveImages(tx, teamId, body);
        const heldOutHash = heldOutHashOf(images.map((i) => i.sha256));
        const heldOutImageIds = images.map((i) => i.id);
        const jobId = await tx.jobs.insert({ teamId, codebookId, kind: 'evaluate', payload: { heldOutImageIds, heldOutHash }, createdBy: actorUserId });
        await recordAudit(tx, {
          teamId,
          actorUserId,
          action: 'evaluation.requested',
          targetType: 'codebook',
          targetId: codebookId,
          details: { jobId, images: heldOutImageIds.length, heldOutHash },
        });
        return { job: { id: jobId, kind: 'evaluate' as const, state: 'queued', codebookId, heldOutHash, imageCount: images.length } };
      });
      deps.jobQueued?.();
      return queued;
    },

    async codebookEvaluations(teamId: number, codebookId: number): Promise<CodebookEvaluations> {
      const codebook = await db.repos.codebooks.findForTeam(teamId, codebookId);
      if (!codebook) throw notFound('Codebook');
      const evaluations = await db.repos.evaluations.listForCodebook(codebookId);
      const out: CodebookEvaluations['evaluations'] = [];
      for (const e of evaluations) {
        const rows = await db.repos.evaluations.imagesOf(e.id);
        const images = new Map((await db.repos.runs.teamImages(teamId, rows.map((r) => r.imageId))).map((i) => [i.id, i]));
        out.push({
          id: e.id,
          heldOutHash: e.heldOutHash,
          pixels: e.overall.pixels,
          createdAt: e.createdAt,
          bppFixed: e.overall.bppFixed,
          bppEntropy: e.overall.bppEntropy,
          bppActual: e.overall.bppActual,
          mse: e.overall.mse,
          psnr: e.overall.psnr,
          ssim: e.overall.ssim,
          lossless: lossless(e.overall.psnr, e.overall.mse),
          images: rows.filter((r) => images.has(r.imageId)).map((r) => toImageMetrics(r, images.get(r.imageId)!)),
        });
      }
      return { evaluations: out };
    },

    async curveCsv(teamId: number, runId: number): Promise<{ fileName: string; text: string }> {
      const c = await curve(teamId, runId);
      const header = ['codebook_id', 'bits', 'size', 'bpp_fixed (bit/px)', 'bpp_entropy (bit/px)', 'bpp_actual (bit/px)', 'mse (per component)', 'psnr (dB)', 'ssim'];
      const rows = c.points.map((p) => [p.codebookId, p.bits, p.size, p.bppFixed, p.bppEntropy, p.bppActual, p.mse, csvPsnr(p.psnr, p.mse), p.ssim]);
      return { fileName: `${fileNameStem(c.run.name)}-curve.csv`, text: csv(header, rows) };
    },

    async metricsCsv(teamId: number, runId: number): Promise<{ fileName: string; text: string }> {
      const m = await metrics(teamId, runId);
      const header = [
        'codebook_id', 'bits', 'size', 'image_id', 'file_name', 'width (px)', 'height (px)', 'container_bytes (B)',
        'bpp_fixed (bit/px)', 'bpp_entropy (bit/px)', 'bpp_actual (bit/px)', 'mse (per component)', 'psnr (dB)', 'ssim',
      ];
      const rows = m.codebooks.flatMap((c) =>
        c.images.map((i) => [c.codebookId, c.bits, c.size, i.imageId, i.fileName, i.width, i.height, i.containerBytes, i.bppFixed, i.bppEntropy, i.bppActual, i.mse, csvPsnr(i.psnr, i.mse), i.ssim]),
      );
      return { fileName: `${fileNameStem(m.run.name)}-metrics.csv`, text: csv(header, rows) };
    },
  };
}

export type EvaluationService = ReturnType<typeof createEvaluationService>;
