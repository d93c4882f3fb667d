import { createHash } from 'node:crypto';
import type { ChannelResponse, CurvePoint, ReleaseReport } from '../contracts';
import type { CodebookWithCodewords, Database } from '../db';
import type { EvaluationRecord } from '../db/repositories/evaluations';
import { encode, firmwareBundle, psnrForJson, tileErrors, type Codebook } from '../engine';
import { DEFAULT_BD_METHOD, type StructureKind } from '../engine/vocabulary';
import { AppError, conflict, notFound } from '../errors';
import { againstEachCodec } from './bd-figures';
import { createComputeSlots } from './compute-slots';
import type { CodebookChannelService } from './codebook-channel';
import { codebookSummaryOf, engineCodebookOf } from './codebooks';
import { bppRawOf, rawGeometries, rawGeometryOf, toImageMetrics, type RawGeometry } from './evaluation-results';
import { heldOutHash } from './held-out-hash';
import type { ReleasesService } from './releases';

/** Tiles of the worst-tiles table: 32 × 32 pixels, and the eight worst over all held-out images. */
export const REPORT_TILE_SIZE = 32;
export const REPORT_WORST_TILES = 8;
/** Held-out images the report decodes for its tiles and rounding cost; a longer list is measured on its first ones. */
export const REPORT_MAX_IMAGES = 64;
/** Computed reports kept in memory: a release never changes, so an entry never goes stale. */
const REPORT_MEMO_ENTRIES = 16;

type Computed = Pick<ReleaseReport, 'worstTiles' | 'decoderCost' | 'checksums' | 'channel'>;

const lossless = (psnr: number | null, mse: number) => psnr === null && mse === 0;

function pointOf(codebookId: number, bits: number, size: number, structure: StructureKind, lambda: number | null, o: EvaluationRecord['overall'], bppRaw: number): CurvePoint {
  return {
    codebookId,
    bits,
    size,
    structure,
    lambda,
    bppFixed: o.bppFixed,
    bppEntropy: o.bppEntropy,
    bppActual: o.bppActual,
    bppRaw,
    mse: o.mse,
    psnr: o.psnr,
    ssim: o.ssim,
    lossless: lossless(o.psnr, o.mse),
  };
}

/**
 * The printable report of a release, from its frozen codebook and pinned evaluation. The figures stored at
 * evaluation are read back; the worst tiles and the fixed-point rounding cost are measured here once per release
 * (decoding the held-out originals) and then kept, since nothing they depend on can change.
 */
export function createReleaseReportService(deps: {
  db: Database;
  releases: ReleasesService;
  /** The channel curve of a codebook at the studio's defaults (codebook-channel.ts), for the report's robustness section. */
  channelCurve: (teamId: number, codebookId: number, signal: AbortSignal) => Promise<ChannelResponse>;
  /** The firmware table's rounding cost (codebook-channel.ts), the same measurement as the codebook page's. */
  measureRounding: CodebookChannelService['measureRounding'];
  /** Measurements at once and waiting (the reconstruction views' bounds: both decode and code held-out images). */
  maxConcurrent: number;
  maxQueued: number;
}) {
  const { db } = deps;
  const memo = new Map<number, Promise<Computed>>();
  const slots = createComputeSlots({ maxRunning: deps.maxConcurrent, maxQueued: deps.maxQueued, what: 'release reports' });

  /** Only a full-search codebook trained here has a raw fixed-rate payload and its own held-out images to send. */
  async function channelOf(teamId: number, codebook: CodebookWithCodewords): Promise<Computed['channel']> {
    if (codebook.structure !== 'full') return { curve: null, note: `Not measured: the channel model covers fixed-rate full-search payloads; this codebook is ${codebook.structure}.` };
    if (codebook.runId === null) return { curve: null, note: 'Not measured here: an imported codebook has no held-out images of its own (measure it on the codebook page with a set).' };
    try {
      return { curve: await deps.channelCurve(teamId, codebook.id, new AbortController().signal), note: null };
    } catch (error) {
      // A bound of the channel computation (too many pixel decodes): the report says so instead of failing.
      if (error instanceof AppError && error.status === 400) return { curve: null, note: `Not measured: ${error.message}` };
      throw error;
    }
  }

  async function measure(book: Codebook, images: { id: number; sha256: string; fileName: string; width: number; height: number }[], channel: () => Promise<Computed['channel']>): Promise<Computed> {
    const measured = images.slice(0, REPORT_MAX_IMAGES);
    const tiles: ReleaseReport['worstTiles']['tiles'] = [];
    // The bundle's default storage (int16 for signed tables), whose files the report's checksums name.
    const bundle = firmwareBundle(book);
    const rounding = await deps.measureRounding(book, measured, {
      residual: 'int16',
      // Shared by every request for the release (see measured()), so no one request's disconnect may stop it.
      signal: new AbortController().signal,
      // The worst tiles come from the same decoded pixels the rounding is measured on.
      onImage: async (i, decoded) => {
        const image = measured[i];
        const { reconstruction } = await encode(book, decoded);
        for (const t of tileErrors(decoded.pixels, reconstruction, decoded.width, decoded.height, decoded.channels, REPORT_TILE_SIZE).slice(0, REPORT_WORST_TILES)) {
          tiles.push({ imageId: image.id, fileName: image.fileName, imageWidth: decoded.width, imageHeight: decoded.height, ...t, psnr: psnrForJson(t.psnr) });
        }
      },
    });
    tiles.sort((a, b) => b.mse - a.mse || a.imageId - b.imageId || a.y - b.y || a.x - b.x);
    return {
      channel: await channel(),
      worstTiles: { tileSize: REPORT_TILE_SIZE, tiles: tiles.slice(0, REPORT_WORST_TILES), imagesMeasured: rounding.images },
      decoderCost: {
        tableType: rounding.tableType,
        fractionBits: rounding.fractionBits,
        saturated: rounding.saturated,
        tableBytes: rounding.tableBytes,
        rounding: { psnrFloat: rounding.psnrFloat, psnrFixed: rounding.psnrFixed, costDb: rounding.costDb, differing: rounding.differing },
      },
      checksums: {
        codewords: book.checksum,
        firmwareFiles: bundle.files.map((f) => {
          const bytes = Buffer.from(f.text, 'utf8');
          return { name: f.name, bytes: bytes.length, sha256: createHash('sha256').update(bytes).digest('hex') };
        }),
      },
    };
  }

  function measured(releaseId: number, start: () => Promise<Computed>): Promise<Computed> {
    let entry = memo.get(releaseId);
    if (!entry) {
      // Shared by every request for the release, so no one request's disconnect may stop it.
      entry = slots.acquire(new AbortController().signal).then(async (release) => {
        try {
          return await start();
        } finally {
          release();
        }
      });
      memo.set(releaseId, entry);
      // A failure is not kept: the next request measures again.
      entry.catch(() => memo.delete(releaseId));
      if (memo.size > REPORT_MEMO_ENTRIES) memo.delete(memo.keys().next().value!);
    }
    return entry;
  }

  async function curveOf(codebook: CodebookWithCodewords, evaluation: EvaluationRecord, heldOut: { width: number; height: number }[]): Promise<ReleaseReport['curve']> {
    const own = rawGeometryOf(codebook, codebook.metadata.structure);
    const geometry = codebook.runId === null ? new Map<number, RawGeometry>() : await rawGeometries(db, await db.repos.codebooks.listForRun(codebook.runId));
    const points = codebook.runId === null
      ? [pointOf(codebook.id, codebook.bits, codebook.size, codebook.structure, codebook.lambda, evaluation.overall, bppRawOf(own, heldOut, evaluation.overall.bytes))]
      // The released codebook's own family: a λ sweep's curve for an entropy-constrained release, the sizes otherwise.
      : (await db.repos.evaluations.curveOfRun(codebook.runId, evaluation.heldOutHash))
        .filter((r) => r.structure === codebook.structure)
        .map((r) => pointOf(r.codebookId, r.bits, r.size, r.structure as StructureKind, r.lambda, r.overall, bppRawOf(geometry.get(r.codebookId) ?? own, heldOut, r.overall.bytes)));
    const baselines: ReleaseReport['curve']['baselines'] = { jpeg: [], webp: [], avif: [] };
    for (const p of await db.repos.baselines.list(evaluation.heldOutHash, codebook.color)) {
      baselines[p.codec].push({ quality: p.quality, bpp: p.bpp, mse: p.mse, psnr: p.psnr, ssim: p.ssim });
    }
    // As on a run's page: the codecs' rate is their files' bytes, so the codebooks stand beside them on the actual rate.
    const actual = points.map((p) => ({ bpp: p.bppActual, psnr: p.psnr }));
    return { points, baselines, bd: { method: DEFAULT_BD_METHOD, againstBaselines: againstEachCodec(actual, baselines, DEFAULT_BD_METHOD) } };
  }

  return {
    async report(teamId: number, releaseId: number): Promise<ReleaseReport> {
      const release = await deps.releases.get(teamId, releaseId);
      const pinned = await db.repos.releases.find(teamId, releaseId);
      if (release.state !== 'approved' || !pinned?.evaluationId) {
        throw conflict('The report is made for a released codebook: this one has not been approved', { state: release.state });
      }
      const codebook = await db.repos.codebooks.findForTeam(teamId, release.codebookId);
      if (!codebook) throw notFound('Codebook');
      const evaluation = (await db.repos.evaluations.listForCodebook(codebook.id)).find((e) => e.id === pinned.evaluationId);
      if (!evaluation) throw notFound('Evaluation');
      const rows = await db.repos.evaluations.imagesOf(evaluation.id);
      const imageRecords = new Map((await db.repos.runs.teamImages(teamId, rows.map((r) => r.imageId))).map((i) => [i.id, i]));
      const geometry = rawGeometryOf(codebook, codebook.metadata.structure);
      const images = rows.filter((r) => imageRecords.has(r.imageId)).map((r) => toImageMetrics(r, imageRecords.get(r.imageId)!, geometry));
      const training = codebook.runId === null ? null : await db.repos.runs.imagesOf(codebook.runId, 'training');
      const book = engineCodebookOf(codebook);
      const [curve, computed] = await Promise.all([
        curveOf(codebook, evaluation, [...imageRecords.values()]),
        measured(releaseId, () => measure(book, rows.flatMap((r) => (imageRecords.has(r.imageId) ? [imageRecords.get(r.imageId)!] : [])), () => channelOf(teamId, codebook))),
      ]);
      const { trace: _trace, ...trainingConfig } = (codebook.metadata.training ?? {}) as Record<string, unknown>;
      return {
        release,
        codebook: codebookSummaryOf(codebook),
        configuration: {
          color: codebook.color,
          preprocessing: (codebook.metadata.preprocessing ?? {}) as Record<string, unknown>,
          training: trainingConfig,
        },
        hashes: {
          trainingData: training ? heldOutHash(training.map((i) => i.sha256)) : null,
          heldOut: evaluation.heldOutHash,
          trainingImages: training ? training.length : null,
          heldOutImages: rows.length,
        },
        curve,
        images,
        ...computed,
      };
    },
  };
}

export type ReleaseReportService = ReturnType<typeof createReleaseReportService>;
