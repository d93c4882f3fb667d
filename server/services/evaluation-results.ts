import type { BaselineCurves, CodebookEvaluations, ImageMetrics, RunCurve, RunMetrics } from '../contracts';
import type { Database } from '../db';
import type { EvaluationImageMetrics } from '../db/repositories/evaluations';
import type { RunRecord } from '../db/repositories/runs';
import { rawContainerBytes, rawSetBytes, structureFromInfo, type RawGeometry, type StructureInfo } from '../engine';
import { DEFAULT_BD_METHOD, type StructureKind } from '../engine/vocabulary';
import { notFound } from '../errors';
import { againstEachCodec } from './bd-figures';

const lossless = (psnr: number | null, mse: number) => psnr === null && mse === 0;

export type { RawGeometry };

type StoredGeometry = { patch: { width: number; height: number }; size: number; meanBits: number };

/** What the raw rate needs of a stored codebook: its row's patch, size and mean bits, and its document's structure. */
export function rawGeometryOf(c: StoredGeometry, structure: unknown): RawGeometry {
  return { patch: c.patch, size: c.size, meanBits: c.meanBits, structure: structureFromInfo(structure as StructureInfo | undefined) };
}

/** Raw geometries of stored codebooks by id, their documents' structures read in one query. */
export async function rawGeometries(db: Database, codebooks: readonly (StoredGeometry & { id: number })[]): Promise<Map<number, RawGeometry>> {
  const structures = await db.repos.codebooks.structuresOf(codebooks.map((c) => c.id));
  return new Map(codebooks.map((c) => [c.id, rawGeometryOf(c, structures.get(c.id))]));
}

/**
 * Raw bits over pixels of a set of images (rawSetBytes: from the geometry for fixed-length index layouts, nothing coded
 * again; for variable-length ones the containers the evaluation wrote, `writtenBytes` in all, which are stored raw).
 */
export function bppRawOf(g: RawGeometry, images: { width: number; height: number }[], writtenBytes: number): number {
  const pixels = images.reduce((n, i) => n + i.width * i.height, 0);
  return pixels === 0 ? 0 : (rawSetBytes(images, g, writtenBytes) * 8) / pixels;
}

/** One image's figures as the API shows them, with its raw rate from the codebook's geometry (rawContainerBytes). */
export function toImageMetrics(m: EvaluationImageMetrics, image: { fileName: string; width: number; height: number }, g: RawGeometry): ImageMetrics {
  const rawBytes = rawContainerBytes(image.width, image.height, g, { writtenBytes: m.containerBytes });
  return {
    rawBytes,
    bppRaw: (rawBytes * 8) / (image.width * image.height),
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

/** Reads of measured results: a run's curve and per-image metrics, a codebook's evaluations. */
export function createEvaluationResults(deps: { db: Database }) {
  const { db } = deps;

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

  async function curve(teamId: number, runId: number): Promise<RunCurve> {
    const run = await runOf(teamId, runId);
    // Independent reads: issued together so the request waits for one round trip, not two.
    const [rows, baselines, codebooks, heldOut] = await Promise.all([
      db.repos.evaluations.curveOfRun(run.id, run.heldOutHash),
      baselineCurves(run.heldOutHash, run.normalized?.color ?? null),
      db.repos.codebooks.listForRun(run.id),
      db.repos.runs.imagesOf(run.id, 'held-out'),
    ]);
    const geometry = await rawGeometries(db, codebooks);
    // The codecs' rate is their files' bytes, so the codebooks stand beside them on theirs: the actual rate. The
    // deltas are the full-search series' (a run's entropy-constrained codebooks form a curve of their own).
    const actual = rows.filter((r) => r.structure === 'full').map((r) => ({ bpp: r.overall.bppActual, psnr: r.overall.psnr }));
    return {
      run: { id: run.id, name: run.name, state: run.state },
      heldOutHash: run.heldOutHash,
      color: run.normalized?.color ?? null,
      bd: { method: DEFAULT_BD_METHOD, againstBaselines: againstEachCodec(actual, baselines, DEFAULT_BD_METHOD) },
      points: rows.map((r) => ({
        codebookId: r.codebookId,
        bits: r.bits,
        size: r.size,
        structure: r.structure as StructureKind,
        lambda: r.lambda,
        bppFixed: r.overall.bppFixed,
        bppEntropy: r.overall.bppEntropy,
        bppActual: r.overall.bppActual,
        bppRaw: bppRawOf(geometry.get(r.codebookId)!, heldOut, r.overall.bytes),
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
    const [rows, codebooks] = await Promise.all([db.repos.evaluations.imageMetricsOfRun(run.id, run.heldOutHash), db.repos.codebooks.listForRun(run.id)]);
    const geometry = await rawGeometries(db, codebooks);
    const byCodebook = new Map<number, RunMetrics['codebooks'][number]>();
    for (const r of rows) {
      let entry = byCodebook.get(r.codebookId);
      if (!entry) byCodebook.set(r.codebookId, (entry = { codebookId: r.codebookId, bits: r.bits, size: r.size, images: [] }));
      entry.images.push(toImageMetrics(r, r, geometry.get(r.codebookId)!));
    }
    return { run: { id: run.id, name: run.name, state: run.state }, heldOutHash: run.heldOutHash, codebooks: [...byCodebook.values()] };
  }

  async function codebookEvaluations(teamId: number, codebookId: number): Promise<CodebookEvaluations> {
    const codebook = await db.repos.codebooks.findForTeam(teamId, codebookId);
    if (!codebook) throw notFound('Codebook');
    const evaluations = await db.repos.evaluations.listForCodebook(codebookId);
    const geometry = rawGeometryOf(codebook, codebook.metadata.structure);
    const out: CodebookEvaluations['evaluations'] = [];
    for (const e of evaluations) {
      const rows = await db.repos.evaluations.imagesOf(e.id);
      const images = new Map((await db.repos.runs.teamImages(teamId, rows.map((r) => r.imageId))).map((i) => [i.id, i]));
      const kept = rows.filter((r) => images.has(r.imageId));
      out.push({
        id: e.id,
        heldOutHash: e.heldOutHash,
        pixels: e.overall.pixels,
        createdAt: e.createdAt,
        bppFixed: e.overall.bppFixed,
        bppEntropy: e.overall.bppEntropy,
        bppActual: e.overall.bppActual,
        bppRaw: bppRawOf(geometry, kept.map((r) => images.get(r.imageId)!), kept.reduce((n, r) => n + r.containerBytes, 0)),
        mse: e.overall.mse,
        psnr: e.overall.psnr,
        ssim: e.overall.ssim,
        lossless: lossless(e.overall.psnr, e.overall.mse),
        images: kept.map((r) => toImageMetrics(r, images.get(r.imageId)!, geometry)),
      });
    }
    return { evaluations: out };
  }

  return { curve, metrics, codebookEvaluations };
}
