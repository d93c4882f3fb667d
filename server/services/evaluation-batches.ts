import {
  evaluateBatchPayload,
  evaluateCodebookPayload,
  terminalJobStates,
  type CreateEvaluationBatchBody,
  type EvaluateBatchPayload,
  type EvaluationBatch,
  type EvaluationBatchList,
} from '../contracts';
import type { Database, JobRecord, Repositories } from '../db';
import { evaluationMatrixCsv } from '../engine';
import { badRequest, conflict, notFound } from '../errors';
import { recordAudit } from './audit';
import type { CsvFile } from './evaluation-csv';
import { heldOutHash as heldOutHashOf } from './held-out-hash';
import { toJobSummary } from './runs';
import { bppRawOf, rawGeometries } from './evaluation-results';

/** The batches a list shows: the newest this many. */
const BATCH_LIST_LIMIT = 100;

const lossless = (psnr: number | null, mse: number) => psnr === null && mse === 0;

/** What a batch job measures, from its payload; a one-codebook evaluation queued before batches is a batch of one. */
function batchOf(job: JobRecord): EvaluateBatchPayload | null {
  const batch = evaluateBatchPayload.safeParse(job.payload);
  if (batch.success) return batch.data;
  const single = evaluateCodebookPayload.safeParse(job.payload);
  if (single.success && job.codebookId !== null) {
    return { codebookIds: [job.codebookId], sets: [{ setId: null, name: 'chosen images', imageIds: single.data.heldOutImageIds, heldOutHash: single.data.heldOutHash }] };
  }
  return null;
}

/** The team's evaluate job without a run, or 404: a run's own evaluation is the run's (its page and routes). */
async function batchJob(repos: Repositories, teamId: number, jobId: number, lock = false): Promise<{ job: JobRecord; batch: EvaluateBatchPayload }> {
  const job = lock ? await repos.jobs.lock(jobId) : await repos.jobs.findById(jobId);
  const batch = job && job.teamId === teamId && job.kind === 'evaluate' && job.runId === null ? batchOf(job) : null;
  if (!job || !batch) throw notFound('Evaluation');
  return { job, batch };
}

/** Each set's images as they are now: a missing or empty set is refused before anything is queued. */
async function resolveSets(tx: Repositories, teamId: number, setIds: number[]): Promise<EvaluateBatchPayload['sets']> {
  const sets: EvaluateBatchPayload['sets'] = [];
  for (const setId of setIds) {
    const [set, images] = await Promise.all([tx.imageSets.find(teamId, setId), tx.runs.setImages(teamId, setId)]);
    if (!set || !images) throw notFound(`Image set ${setId}`);
    if (images.length === 0) throw badRequest(`The image set “${set.name}” has no images`, { field: 'imageSetIds' });
    sets.push({ setId, name: set.name, imageIds: images.map((i) => i.id), heldOutHash: heldOutHashOf(images.map((i) => i.sha256)) });
  }
  return sets;
}

/**
 * Batch evaluation: several codebooks on several image sets as one evaluate job (server/jobs/handlers/evaluate.ts
 * measures it and commits every cell with its success). A single codebook's evaluation is queued as a batch of one
 * (evaluation-requests.ts), so it has the same status route, cancellation and visible failure.
 */
export function createEvaluationBatches(deps: { db: Database; jobQueued?: () => void; requestCancel?: (jobId: number) => void }) {
  const { db } = deps;

  async function get(teamId: number, jobId: number): Promise<EvaluationBatch> {
    const { job, batch } = await batchJob(db.repos, teamId, jobId);
    const [codebooks, evaluations, images] = await Promise.all([
      db.repos.codebooks.summariesForTeam(teamId, batch.codebookIds),
      db.repos.evaluations.findAll(batch.codebookIds, batch.sets.map((s) => s.heldOutHash)),
      db.repos.runs.teamImages(teamId, [...new Set(batch.sets.flatMap((s) => s.imageIds))]),
    ]);
    const sizes = new Map(images.map((i) => [i.id, i]));
    const byId = new Map(codebooks.map((c) => [c.id, c]));
    const geometry = await rawGeometries(db, codebooks);
    const measured = new Map(evaluations.map((e) => [`${e.codebookId}:${e.heldOutHash}`, e.overall]));
    return {
      job: toJobSummary(job),
      codebooks: batch.codebookIds.map((id) => {
        const c = byId.get(id);
        return { id, name: c?.name ?? null, size: c?.size ?? null, bits: c?.bits ?? null };
      }),
      sets: batch.sets.map((s) => ({ setId: s.setId, name: s.name, imageCount: s.imageIds.length, heldOutHash: s.heldOutHash })),
      cells: batch.codebookIds.flatMap((codebookId) =>
        batch.sets.map((s, setIndex) => {
          const o = measured.get(`${codebookId}:${s.heldOutHash}`);
          const g = geometry.get(codebookId);
          // The raw rate follows from the geometry and the images' sizes (nothing is coded again), or for a
          // variable-length index layout from the containers the evaluation wrote.
          const bppRaw = g && o ? bppRawOf(g, s.imageIds.flatMap((id) => (sizes.has(id) ? [sizes.get(id)!] : [])), o.bytes) : 0;
          const result = o ? { bppFixed: o.bppFixed, bppEntropy: o.bppEntropy, bppActual: o.bppActual, bppRaw, mse: o.mse, psnr: o.psnr, ssim: o.ssim, lossless: lossless(o.psnr, o.mse) } : null;
          return { codebookId, setIndex, result };
        }),
      ),
    };
  }

  return {
    getBatch: get,

    async listBatches(teamId: number): Promise<EvaluationBatchList> {
      const jobs = await db.repos.jobs.listTeamEvaluations(teamId, BATCH_LIST_LIMIT);
      const batches: EvaluationBatchList['batches'] = [];
      for (const job of jobs) {
        const batch = batchOf(job);
        if (batch) batches.push({ job: toJobSummary(job), codebookCount: batch.codebookIds.length, setCount: batch.sets.length, setNames: batch.sets.map((s) => s.name) });
      }
      return { batches };
    },

    async requestBatch(teamId: number, actorUserId: number, body: CreateEvaluationBatchBody): Promise<EvaluationBatch> {
      const jobId = await db.transaction(async (tx) => {
        const found = new Set((await tx.codebooks.summariesForTeam(teamId, body.codebookIds)).map((c) => c.id));
        const missing = body.codebookIds.filter((id) => !found.has(id));
        if (missing.length > 0) throw notFound(`Codebook ${missing.join(', ')}`);
        const payload: EvaluateBatchPayload = { codebookIds: body.codebookIds, sets: await resolveSets(tx, teamId, body.imageSetIds) };
        const codebookId = body.codebookIds.length === 1 ? body.codebookIds[0] : null;
        const id = await tx.jobs.insert({ teamId, codebookId, kind: 'evaluate', payload, createdBy: actorUserId });
        await recordAudit(tx, {
          teamId,
          actorUserId,
          action: 'evaluation.requested',
          targetType: 'job',
          targetId: id,
          details: { jobId: id, codebookIds: body.codebookIds, imageSetIds: body.imageSetIds },
        });
        return id;
      });
      deps.jobQueued?.();
      return get(teamId, jobId);
    },

    /** Cancels a queued batch at once; asks the runner holding a running one to stop it (its results are not kept). */
    async cancelBatch(teamId: number, actorUserId: number, jobId: number): Promise<EvaluationBatch> {
      const requested = await db.transaction(async (tx) => {
        const { job } = await batchJob(tx, teamId, jobId, true);
        if (terminalJobStates.includes(job.state)) throw conflict('The evaluation has already finished', { state: job.state });
        const outcome = await tx.jobs.cancel(jobId);
        await recordAudit(tx, { teamId, actorUserId, action: 'evaluation.cancelled', targetType: 'job', targetId: jobId, details: { jobId } });
        return outcome === 'requested';
      });
      if (requested) deps.requestCancel?.(jobId);
      return get(teamId, jobId);
    },

    /** The matrix as CSV: one row per codebook and set, in the batch's order (engine/metrics/evaluation-csv.ts). */
    async matrixCsv(teamId: number, jobId: number): Promise<CsvFile> {
      const b = await get(teamId, jobId);
      const codebooks = new Map(b.codebooks.map((c) => [c.id, c]));
      const text = evaluationMatrixCsv(
        b.cells.map((cell) => {
          const c = codebooks.get(cell.codebookId)!;
          const s = b.sets[cell.setIndex];
          return { codebook: c.id, codebookName: c.name ?? '', bits: c.bits, codebookSize: c.size, imageSet: s.setId, setName: s.name, images: s.imageCount, figures: cell.result };
        }),
      );
      return { fileName: `evaluation-${jobId}-matrix.csv`, text };
    },
  };
}
