import type { ReconstructionInfo, ReconstructionViewName, StructureStepsInfo } from '../contracts';
import type { Database, ReconstructionRecord } from '../db';
import type { CodebookWithCodewords } from '../db/repositories/codebooks';
import type { RunImageRecord } from '../db/repositories/runs';
import { badRequest, notFound } from '../errors';
import { stepRangeOf, structureFromInfo, type StructureInfo } from '../engine';
import type { EvaluateTask, IndexMapResult, ReconstructResult, ReconstructionView, StructureStepsResult } from '../jobs/tasks/evaluate.task';
import { createComputeSlots } from './compute-slots';
import { toTaskCodebook, type EvaluationTaskRunner } from './task-codebook';

export interface ReconstructionsDeps {
  db: Database;
  /** The content store: originals are read from it, computed views are kept in it. */
  store: { path(sha256: string): string; put(buffer: Buffer): Promise<{ sha256: string }>; read(sha256: string): Promise<Buffer> };
  /** Runs the reconstruct task on a pool thread; aborting its signal stops that thread's work. */
  runTask: EvaluationTaskRunner;
  /** Computations at once (RECONSTRUCTION_MAX_CONCURRENT) and waiting (RECONSTRUCTION_MAX_QUEUED). */
  maxConcurrent: number;
  maxQueued: number;
}

export type ReconstructionAnswer = { kind: 'info'; info: ReconstructionInfo } | { kind: 'png'; png: Buffer; encodedBytes: number };

/** Counters since start, for operators and tests. */
export interface ReconstructionStats {
  /** Computations started (each codes one image and measures it once). */
  computed: number;
  /** Computations stopped because every request waiting for them had gone. */
  cancelled: number;
  /** Requests answered from the store without computing. */
  fromStore: number;
}

const VIEWS: readonly ReconstructionView[] = ['original', 'reconstruction', 'error'];

/** One computation that every request for the same codebook and image waits on. */
interface Flight {
  promise: Promise<Computed>;
  controller: AbortController;
  waiters: number;
}

interface Computed {
  record: ReconstructionRecord;
  pngs: Record<ReconstructionView, Buffer>;
}

function infoOf(r: ReconstructionRecord): ReconstructionInfo {
  return {
    codebookId: r.codebookId,
    imageId: r.imageId,
    width: r.width,
    height: r.height,
    encodedBytes: r.encodedBytes,
    bpp: r.bpp,
    mse: r.mse,
    psnr: r.psnr,
    ssim: r.ssim,
    lossless: r.psnr === null && r.mse === 0,
  };
}

const clientGone = () => badRequest('The request was aborted before its reconstruction was ready');

/**
 * Reconstruction views of one image through one codebook: computed once (all three views and the figures together,
 * since the coding and SSIM are the cost), kept in the content store with a row naming them, and served from there
 * afterwards. Requests for the same pair while it is computed share that computation; computations are bounded
 * (429 beyond the bound); a computation is stopped when every request waiting for it has gone.
 */
export function createReconstructionsService(deps: ReconstructionsDeps) {
  const { db } = deps;
  const slots = createComputeSlots({ maxRunning: deps.maxConcurrent, maxQueued: deps.maxQueued, what: 'reconstructions' });
  const flights = new Map<string, Flight>();
  const stats: ReconstructionStats = { computed: 0, cancelled: 0, fromStore: 0 };

  /** The stored answer, or null when a view's file is gone (restored without it, say) and must be computed again. */
  async function fromStore(record: ReconstructionRecord, view: ReconstructionViewName): Promise<ReconstructionAnswer | null> {
    if (view === 'info') return { kind: 'info', info: infoOf(record) };
    try {
      return { kind: 'png', png: await deps.store.read(record.views[view]), encodedBytes: record.encodedBytes };
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code === 'ENOENT') return null;
      throw err;
    }
  }

  async function compute(codebook: CodebookWithCodewords, image: RunImageRecord, signal: AbortSignal): Promise<Computed> {
    const release = await slots.acquire(signal);
    try {
      stats.computed += 1;
      const result = (await deps.runTask(
        {
          op: 'reconstruct',
          codebook: toTaskCodebook(codebook),
          image: { path: deps.store.path(image.sha256), name: image.fileName, width: image.width, height: image.height },
        },
        signal,
      )) as ReconstructResult;
      const pngs = {} as Record<ReconstructionView, Buffer>;
      const shas = {} as Record<ReconstructionView, string>;
      for (const view of VIEWS) {
        const bytes = result.views[view];
        pngs[view] = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
        // The bytes go in before the row that names them: the sweep spares files put within its grace period.
        shas[view] = (await deps.store.put(pngs[view])).sha256;
      }
      const record: ReconstructionRecord = {
        codebookId: codebook.id,
        imageId: image.id,
        width: result.width,
        height: result.height,
        encodedBytes: result.encodedBytes,
        bpp: result.bpp,
        mse: result.mse,
        psnr: result.psnr,
        ssim: result.ssim,
        views: shas,
      };
      await db.repos.reconstructions.save(record);
      return { record, pngs };
    } catch (err) {
      if (signal.aborted) stats.cancelled += 1;
      throw err;
    } finally {
      release();
    }
  }

  /**
   * Waits for the pair's computation, starting it if none runs. A request that goes away stops waiting at once;
   * when the last one has gone the computation is aborted (the pool stops its thread) and nothing is stored.
   */
  function shared(key: string, signal: AbortSignal | undefined, start: (signal: AbortSignal) => Promise<Computed>): Promise<Computed> {
    let flight = flights.get(key);
    if (!flight || flight.controller.signal.aborted) {
      const controller = new AbortController();
      const fresh: Flight = { controller, waiters: 0, promise: start(controller.signal) };
      fresh.promise
        .finally(() => {
          if (flights.get(key) === fresh) flights.delete(key);
        })
        .catch(() => undefined);
      flights.set(key, fresh);
      flight = fresh;
    }
    const joined = flight;
    joined.waiters += 1;
    return new Promise<Computed>((resolve, reject) => {
      let left = false;
      const leave = () => {
        if (left) return;
        left = true;
        signal?.removeEventListener('abort', onGone);
        joined.waiters -= 1;
      };
      const onGone = () => {
        leave();
        if (joined.waiters === 0) joined.controller.abort(clientGone());
        reject(clientGone());
      };
      if (signal?.aborted) return onGone();
      signal?.addEventListener('abort', onGone, { once: true });
      joined.promise.then(
        (value) => {
          leave();
          resolve(value);
        },
        (err: unknown) => {
          leave();
          reject(err);
        },
      );
    });
  }

  const taskImage = (image: RunImageRecord) => ({ path: deps.store.path(image.sha256), name: image.fileName, width: image.width, height: image.height });

  /** Runs a task in one of the bounded compute places (429 beyond them); stops it when the client leaves. */
  async function boundedTask(task: EvaluateTask, signal?: AbortSignal): Promise<unknown> {
    const controller = new AbortController();
    const onGone = () => controller.abort(clientGone());
    signal?.addEventListener('abort', onGone, { once: true });
    if (signal?.aborted) onGone();
    try {
      const release = await slots.acquire(controller.signal);
      try {
        return await deps.runTask(task, controller.signal);
      } finally {
        release();
      }
    } finally {
      signal?.removeEventListener('abort', onGone);
    }
  }

  /** The team's codebook and image for the steps routes, and the codebook's steps (404 for a flat codebook). */
  async function stepsInput(teamId: number, codebookId: number, imageId: number) {
    const codebook = await db.repos.codebooks.findForTeam(teamId, codebookId);
    if (!codebook) throw notFound('Codebook');
    const range = stepRangeOf(structureFromInfo(codebook.metadata.structure as StructureInfo | undefined));
    if (!range) throw notFound('Levels or stages (a full-search or entropy-constrained codebook is one flat table)');
    const [image] = await db.repos.runs.teamImages(teamId, [imageId]);
    if (!image) throw notFound('Image');
    return { codebook, image, range };
  }

  return {
    /**
     * One image of the team through one codebook of the team, coded exactly as the evaluation coded it.
     * `info` answers the figures; the other views a PNG and the container size.
     * @param signal  aborts when the client goes away
     */
    async get(teamId: number, codebookId: number, imageId: number, view: ReconstructionViewName, signal?: AbortSignal): Promise<ReconstructionAnswer> {
      const stored = await db.repos.reconstructions.findForTeam(teamId, codebookId, imageId);
      const answer = stored && (await fromStore(stored, view));
      if (answer) {
        stats.fromStore += 1;
        return answer;
      }
      const codebook = await db.repos.codebooks.findForTeam(teamId, codebookId);
      if (!codebook) throw notFound('Codebook');
      const [image] = await db.repos.runs.teamImages(teamId, [imageId]);
      if (!image) throw notFound('Image');
      const computed = await shared(`${codebookId}:${imageId}`, signal, (s) => compute(codebook, image, s));
      if (view === 'info') return { kind: 'info', info: infoOf(computed.record) };
      return { kind: 'png', png: computed.pngs[view], encodedBytes: computed.record.encodedBytes };
    },

    /**
     * One image's index map through one codebook as a NumPy .npy file (blocksY × blocksX, uint16 up to 65,536
     * codewords), coded by the evaluation's encoder; `plane: 'means'` gives a mean-removed codebook's block mean codes
     * instead (404 for a codebook without mean removal). Not kept: coding alone is cheap next to the views' SSIM and
     * PNGs, but it takes one of the same bounded compute places (429 beyond them) and stops when the client leaves.
     */
    async indexMap(teamId: number, codebookId: number, imageId: number, plane: 'indices' | 'means', signal?: AbortSignal): Promise<{ fileName: string; npy: Buffer }> {
      const codebook = await db.repos.codebooks.findForTeam(teamId, codebookId);
      if (!codebook) throw notFound('Codebook');
      const [image] = await db.repos.runs.teamImages(teamId, [imageId]);
      if (!image) throw notFound('Image');
      if (plane === 'means' && codebook.meanBits === 0) throw notFound('Block means (this codebook codes no block means)');
      const result = (await boundedTask({ op: 'index-map', codebook: toTaskCodebook(codebook), image: taskImage(image) }, signal)) as IndexMapResult;
      const bytes = plane === 'means' ? result.means! : result.indices;
      const stem = image.fileName.replace(/\.[^.]*$/, '').replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^[-.]+|[-.]+$/g, '') || 'image';
      return { fileName: `${stem}-codebook-${codebookId}.${plane}.npy`, npy: Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength) };
    },

    /**
     * One image through a tree's levels (0 … its longest path) or a residual codebook's stages (1, 1+2, … S): each
     * step's mean index bits, MSE and PSNR, coded once with the codebook's own search. Not kept (no SSIM, no PNGs: a
     * few decodes of one image); it takes one of the bounded compute places like the index map. 404 for a flat codebook.
     */
    async steps(teamId: number, codebookId: number, imageId: number, signal?: AbortSignal): Promise<StructureStepsInfo> {
      const { codebook, image } = await stepsInput(teamId, codebookId, imageId);
      const result = (await boundedTask({ op: 'structure-steps', codebook: toTaskCodebook(codebook), image: taskImage(image) }, signal)) as StructureStepsResult;
      return { codebookId, imageId, kind: result.kind, steps: result.steps };
    },

    /** One step's reconstruction as a PNG (404 for a step outside the codebook's levels or stages). */
    async stepPng(teamId: number, codebookId: number, imageId: number, step: number, signal?: AbortSignal): Promise<Buffer> {
      const { codebook, image, range } = await stepsInput(teamId, codebookId, imageId);
      if (step < range.first || step > range.last) {
        throw notFound(`Step ${step} (this codebook's ${range.kind === 'tree-level' ? 'levels' : 'stages'} are ${range.first}..${range.last})`);
      }
      const result = (await boundedTask(
        { op: 'structure-steps', codebook: toTaskCodebook(codebook), image: taskImage(image), keep: step },
        signal,
      )) as StructureStepsResult;
      const png = result.png!;
      return Buffer.from(png.buffer, png.byteOffset, png.byteLength);
    },

    /** Counters since start; computations running and waiting for a slot now, and the requests waiting on them. */
    stats(): ReconstructionStats & { running: number; waiting: number; requests: number } {
      let requests = 0;
      for (const flight of flights.values()) requests += flight.waiters;
      return { ...stats, ...slots.load(), requests };
    },
  };
}

export type ReconstructionsService = ReturnType<typeof createReconstructionsService>;
