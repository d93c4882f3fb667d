import type { ChannelQuery, ChannelResponse, ReorderBody, ReorderResponse, RoundingQuery, RoundingResponse } from '../contracts';
import { DEFAULT_BERS, STUDIO_CHANNEL_MAX_PIXEL_RUNS, STUDIO_REORDER_MAX_BITS } from '../contracts';
import type { Database } from '../db';
import type { CodebookWithCodewords } from '../db/repositories/codebooks';
import type { RunImageRecord } from '../db/repositories/runs';
import { firmwareBundle, firmwareZip, fixedPointCost, fixedPointTableBytes, loadImage, psnrForJson, type ChannelCurve, type Codebook, type PixelImage, type ResidualWidth } from '../engine';
import { badRequest, notFound } from '../errors';
import type { ChannelTask, ReorderTaskResult } from '../jobs/tasks/channel.task';
import { recordAudit } from './audit';
import { engineCodebookOf, type CodebooksService } from './codebooks';
import { createComputeSlots } from './compute-slots';

import { toTaskCodebook } from './task-codebook';

/** Runs one channel task off the request loop (a task pool); aborting the signal abandons it. */
export type ChannelTaskRunner = (task: ChannelTask, signal?: AbortSignal) => Promise<unknown>;

export interface CodebookChannelDeps {
  db: Database;
  store: { path(sha256: string): string };
  codebooks: CodebooksService;
  runTask: ChannelTaskRunner;
  /** Computations at once and waiting; the reconstruction views' bounds (RECONSTRUCTION_MAX_CONCURRENT, …_QUEUED). */
  maxConcurrent: number;
  maxQueued: number;
}

/** The firmware table's rounding cost as the codebook page and the release report show it. */
export interface RoundingFigures {
  images: number;
  tableType: string;
  fractionBits: number;
  saturated: number;
  tableBytes: number;
  psnrFloat: number | null;
  psnrFixed: number | null;
  costDb: number;
  differing: number;
}

/** An image the rounding cost is measured on: its original in the content store. */
export interface RoundingImage {
  sha256: string;
  fileName: string;
}

function curveJson(codebookId: number, images: number, c: ChannelCurve): ChannelResponse {
  return {
    codebookId, images, pixels: c.pixels, payloadBytes: c.payloadBytes, rawBpp: (c.payloadBytes * 8) / c.pixels, noiselessPsnr: psnrForJson(c.noiselessPsnr),
    resyncRows: c.resyncRows, seeds: c.seeds, expectedNote: c.expectedNote,
    points: c.points.map((p) => ({ ...p, psnr: psnrForJson(p.psnr), expectedPsnr: p.expectedPsnr === null ? null : psnrForJson(p.expectedPsnr) })),
  };
}

/**
 * Channel errors for the studio (server/engine/channel): PSNR against bit-error rate on a codebook's held-out images
 * (or a named set), index assignment that saves the reordered codebook as a new one, and the firmware bundle as a zip.
 * Curves and reordering run on a pool thread within the reconstruction views' bounds (429 beyond them); nothing but
 * the reordered codebook is stored.
 */
export function createCodebookChannelService(deps: CodebookChannelDeps) {
  const { db } = deps;
  const slots = createComputeSlots({ maxRunning: deps.maxConcurrent, maxQueued: deps.maxQueued, what: 'channel computations' });
  const taskImage = (i: RunImageRecord) => ({ path: deps.store.path(i.sha256), name: i.fileName, width: i.width, height: i.height });

  async function mustFind(teamId: number, codebookId: number): Promise<CodebookWithCodewords> {
    const codebook = await db.repos.codebooks.findForTeam(teamId, codebookId);
    if (!codebook) throw notFound('Codebook');
    return codebook;
  }

  async function run<T>(task: ChannelTask, signal: AbortSignal): Promise<T> {
    const release = await slots.acquire(signal);
    try {
      return (await deps.runTask(task, signal)) as T;
    } finally {
      release();
    }
  }

  async function imagesFor(teamId: number, codebook: CodebookWithCodewords, setId: number | undefined): Promise<RunImageRecord[]> {
    if (setId !== undefined) {
      const set = await db.repos.runs.setImages(teamId, setId);
      if (!set) throw notFound('Image set');
      return set;
    }
    if (codebook.runId === null) throw badRequest('An imported codebook has no held-out images of its own; name a set with setId');
    return db.repos.runs.imagesOf(codebook.runId, 'held-out');
  }

  /**
   * The PSNR cost of the firmware table's fixed point (`residual` storage for signed tables) on images: each decoded
   * once from the store, handed to `onImage` (the release report takes its worst tiles from the same pixels), then the
   * engine's float decoder measured against the table's. The one measurement behind the codebook page's rounding
   * route and the release report; the caller holds a compute slot.
   */
  async function measureRounding(
    book: Codebook, images: readonly RoundingImage[], options: { residual: ResidualWidth; signal: AbortSignal; onImage?: (index: number, pixels: PixelImage) => void | Promise<void> },
  ): Promise<RoundingFigures> {
    const color = book.patch!.color;
    const { table } = firmwareBundle(book, { residual: options.residual });
    const pixels: PixelImage[] = [];
    for (const image of images) {
      options.signal.throwIfAborted();
      const decoded = await loadImage(deps.store.path(image.sha256), color, image.fileName);
      await options.onImage?.(pixels.length, decoded);
      pixels.push(decoded);
    }
    const cost = await fixedPointCost(book, table, pixels, { signal: options.signal });
    return {
      images: pixels.length, tableType: table.type, fractionBits: table.fractionBits, saturated: table.saturated, tableBytes: fixedPointTableBytes(table, book),
      psnrFloat: psnrForJson(cost.psnrFloat), psnrFixed: psnrForJson(cost.psnrFixed), costDb: cost.costDb, differing: cost.differing,
    };
  }

  return {
    measureRounding,

    /** PSNR against bit-error rate, measured over seeds and expected from the closed form, on held-out images. */
    async curve(teamId: number, codebookId: number, q: ChannelQuery, signal: AbortSignal): Promise<ChannelResponse> {
      const codebook = await mustFind(teamId, codebookId);
      const images = await imagesFor(teamId, codebook, q.setId);
      if (images.length === 0) throw badRequest('There are no images to send through the channel');
      const bers = q.ber ?? [...DEFAULT_BERS];
      const runs = images.reduce((n, i) => n + i.width * i.height, 0) * q.seeds * bers.length;
      if (runs > STUDIO_CHANNEL_MAX_PIXEL_RUNS) {
        throw badRequest(
          `${images.length} images × ${q.seeds} seeds × ${bers.length} rates is ${runs.toExponential(2)} pixel decodes, over the studio's ${STUDIO_CHANNEL_MAX_PIXEL_RUNS.toExponential(0)}; take fewer seeds or rates, or use cellwright channel`,
        );
      }
      const task: ChannelTask = { op: 'curve', codebook: toTaskCodebook(codebook), images: images.map(taskImage), bers, seeds: q.seeds, resyncRows: q.resync };
      return curveJson(codebookId, images.length, await run<ChannelCurve>(task, signal));
    },

    /** Index assignment at `ber`: the reordered codebook saved as a new (imported) codebook of the team; the original stays as it is. */
    async reorder(teamId: number, userId: number, codebookId: number, body: ReorderBody, signal: AbortSignal): Promise<ReorderResponse> {
      const codebook = await mustFind(teamId, codebookId);
      if (codebook.bits > STUDIO_REORDER_MAX_BITS) {
        throw badRequest(`The studio reorders codebooks of up to ${STUDIO_REORDER_MAX_BITS} index bits (${2 ** STUDIO_REORDER_MAX_BITS} codewords); this one has ${codebook.size}. Use cellwright reorder for larger ones.`);
      }
      const r = await run<ReorderTaskResult>({ op: 'reorder', codebook: toTaskCodebook(codebook), ber: body.ber }, signal);
      const id = await db.transaction(async (tx) => {
        const newId = await tx.codebooks.insert({
          teamId, runId: null, name: body.name ?? `${(codebook.runName ?? codebook.name).slice(0, 160)}, reordered for BER ${body.ber}`, source: 'imported',
          bits: codebook.bits, size: codebook.size, dimension: codebook.dimension, patch: codebook.patch, channels: codebook.channels, color: codebook.color,
          meanBits: codebook.meanBits, codewords: r.codewords, usage: r.usage, cellDistortion: null, trace: codebook.trace, metadata: r.metadata, checksum: r.checksum,
        });
        await recordAudit(tx, {
          teamId, actorUserId: userId, action: 'codebook.reordered', targetType: 'codebook', targetId: newId,
          details: { from: codebookId, ber: body.ber, checksum: r.checksum, before: r.before, after: r.after },
        });
        return newId;
      });
      return { codebook: await deps.codebooks.get(teamId, id), ber: body.ber, channelDistortionBefore: r.before, channelDistortionAfter: r.after, swaps: r.swaps };
    },

    /**
     * The PSNR cost of the firmware table's fixed point on held-out images (the run's, or a named set's), shown before
     * the bundle is exported: the engine's float decoder against the table's, on this thread under the slots' bounds.
     */
    async rounding(teamId: number, codebookId: number, q: RoundingQuery, signal: AbortSignal): Promise<RoundingResponse> {
      const codebook = await mustFind(teamId, codebookId);
      const images = await imagesFor(teamId, codebook, q.setId);
      if (images.length === 0) throw badRequest('There are no images to measure the rounding on');
      const release = await slots.acquire(signal);
      try {
        return { codebookId, ...(await measureRounding(engineCodebookOf(codebook), images, { residual: q.residual, signal })) };
      } finally {
        release();
      }
    },

    /** The firmware bundle (`cellwright export --target c`) as a zip, dated by the codebook; recorded as an export. */
    async firmware(teamId: number, userId: number, codebookId: number, residual: 'int16' | 'int8'): Promise<{ fileName: string; body: Buffer }> {
      const codebook = await mustFind(teamId, codebookId);
      const body = firmwareZip(engineCodebookOf(codebook), { residual, modified: new Date(codebook.createdAt) });
      await recordAudit(db.repos, {
        teamId, actorUserId: userId, action: 'codebook.exported', targetType: 'codebook', targetId: codebookId,
        details: { checksum: codebook.checksum, size: codebook.size, target: 'c', residual },
      });
      const stem = (codebook.runName ?? codebook.name).replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 80) || 'codebook';
      return { fileName: `${stem}-b${codebook.bits}-firmware.zip`, body };
    },
  };
}

export type CodebookChannelService = ReturnType<typeof createCodebookChannelService>;
