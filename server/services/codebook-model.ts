import {
  ANOMALY_LIST_DEFAULT, MODEL_CAUTION, terminalJobStates, type AnomalyJobBody, type AnomalyJobPayload, type DenoiseJobBody, type DenoiseJobPayload,
  type ModelJobView, type ModelResult,
} from '../contracts';
import type { Database, JobRecord, Repositories } from '../db';
import type { RunImageRecord } from '../db/repositories/runs';
import { badRequest, conflict, notFound } from '../errors';
import { recordAudit } from './audit';
import { toJobSummary } from './runs';

export interface CodebookModelDeps {
  db: Database;
  /** Wakes the runner after a job row commits, and tells the running job's holder to stop. */
  bus: { jobQueued(): void; requestCancel(jobId: number): void };
}

type PayloadOf = (tx: Repositories, codebook: { runId: number | null }) => Promise<AnomalyJobPayload | DenoiseJobPayload>;

/** Earlier jobs of a codebook looked through for one of the same request: a page's requests are recent ones. */
const FIND_LIMIT = 200;

/** JSON with every object's keys in order, so that two payloads compare by value whatever order stored them. */
function canonicalJson(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) =>
    v && typeof v === 'object' && !Array.isArray(v) ? Object.fromEntries(Object.entries(v).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0))) : v);
}

const isModelJob = (j: JobRecord | null): j is JobRecord & { kind: 'anomaly' | 'denoise'; codebookId: number } =>
  j !== null && (j.kind === 'anomaly' || j.kind === 'denoise') && j.codebookId !== null;

/**
 * The codebook read as a density of its training patches (server/engine/model/README.md), on the studio's data, as
 * jobs: an anomaly map of one image or a ranked list over a set (thresholds measured on the codebook's run's training
 * images), and denoising of an image with seeded synthetic noise. A request queues a job (its row and audit entry in
 * one transaction); the job runs on the workers (server/jobs/handlers/model.ts) and its result is stored with its
 * success, read here by the job's id.
 */
export function createCodebookModelService(deps: CodebookModelDeps) {
  const { db } = deps;

  /** The payload a request queues: one definition for queueing it and for finding an earlier job of the same. */
  async function payloadFor(tx: Repositories, teamId: number, codebookId: number, payloadOf: PayloadOf): Promise<AnomalyJobPayload | DenoiseJobPayload> {
    const codebook = await tx.codebooks.findForTeam(teamId, codebookId);
    if (!codebook) throw notFound('Codebook');
    return payloadOf(tx, codebook);
  }

  async function queue(teamId: number, actorUserId: number, codebookId: number, kind: 'anomaly' | 'denoise', payloadOf: PayloadOf): Promise<ModelJobView> {
    const jobId = await db.transaction(async (tx) => {
      const payload = await payloadFor(tx, teamId, codebookId, payloadOf);
      const id = await tx.jobs.insert({ teamId, codebookId, kind, payload, createdBy: actorUserId });
      // A set's image ids would swell the trail: their count is enough there (the job row keeps the list).
      const details = 'imageIds' in payload ? { target: payload.target, images: payload.imageIds.length, rate: payload.rate, score: payload.score } : payload;
      await recordAudit(tx, { teamId, actorUserId, action: `${kind}.requested`, targetType: 'codebook', targetId: codebookId, details: { jobId: id, ...details } });
      return id;
    });
    deps.bus.jobQueued();
    return status(teamId, jobId);
  }

  /**
   * The newest job of the codebook that the same request queued and that has not failed or been cancelled (its result
   * once it has succeeded, else its progress), or null: nothing is queued.
   */
  async function find(teamId: number, codebookId: number, kind: 'anomaly' | 'denoise', payloadOf: PayloadOf): Promise<{ job: ModelJobView | null }> {
    const payload = await payloadFor(db.repos, teamId, codebookId, payloadOf);
    const wanted = canonicalJson(payload);
    const jobs = await db.repos.jobs.listForCodebook(codebookId, kind, FIND_LIMIT);
    const same = jobs.find((j) => j.state !== 'failed' && j.state !== 'cancelled' && canonicalJson(j.payload) === wanted);
    return { job: same ? await status(teamId, same.id) : null };
  }

  async function mustFindJob(repos: Repositories, teamId: number, jobId: number) {
    const job = await repos.jobs.findById(jobId);
    if (!isModelJob(job) || job.teamId !== teamId) throw notFound('Job');
    return job;
  }

  async function status(teamId: number, jobId: number): Promise<ModelJobView> {
    const job = await mustFindJob(db.repos, teamId, jobId);
    const result = job.state === 'succeeded' ? ((await db.repos.modelResults.find(job.id)) as ModelResult | null) : null;
    return { job: { ...toJobSummary(job), kind: job.kind, codebookId: job.codebookId }, result, caution: MODEL_CAUTION };
  }

  async function teamImage(tx: Repositories, teamId: number, imageId: number): Promise<RunImageRecord> {
    const [image] = await tx.runs.teamImages(teamId, [imageId]);
    if (!image) throw notFound('Image');
    return image;
  }

  const anomalyPayload = (teamId: number, body: AnomalyJobBody): PayloadOf => async (tx, codebook) => {
    const common = { rate: body.rate, score: body.score };
    if (body.imageId !== undefined) return { target: 'map', imageIds: [(await teamImage(tx, teamId, body.imageId)).id], ...common, limit: 0 };
    let images: RunImageRecord[];
    if (body.setId !== undefined) {
      const set = await tx.runs.setImages(teamId, body.setId);
      if (!set) throw notFound('Image set');
      images = set;
    } else if (codebook.runId !== null) {
      images = await tx.runs.imagesOf(codebook.runId, 'held-out');
    } else {
      throw badRequest('An imported codebook has no held-out images of its own; name a set with setId', { field: 'setId' });
    }
    if (images.length === 0) throw badRequest('There are no images to rank', { field: 'setId' });
    return { target: 'list', imageIds: images.map((i) => i.id), ...common, limit: body.limit ?? ANOMALY_LIST_DEFAULT };
  };

  const denoisePayload = (teamId: number, body: DenoiseJobBody): PayloadOf => async (tx) => ({
    imageId: (await teamImage(tx, teamId, body.imageId)).id, sigma: body.sigma, seed: body.seed, step: body.step,
  });

  return {
    /** Queues an anomaly map of one image, or a ranked list over a set (default: the codebook's run's held-out images). */
    requestAnomaly(teamId: number, actorUserId: number, codebookId: number, body: AnomalyJobBody): Promise<ModelJobView> {
      return queue(teamId, actorUserId, codebookId, 'anomaly', anomalyPayload(teamId, body));
    },

    /** Queues seeded Gaussian noise of σ added to one image and removed by the nearest codeword and by the posterior mean. */
    requestDenoise(teamId: number, actorUserId: number, codebookId: number, body: DenoiseJobBody): Promise<ModelJobView> {
      return queue(teamId, actorUserId, codebookId, 'denoise', denoisePayload(teamId, body));
    },

    /** The job an anomaly request queued before, if any (see find); queues nothing. */
    findAnomaly(teamId: number, codebookId: number, body: AnomalyJobBody): Promise<{ job: ModelJobView | null }> {
      return find(teamId, codebookId, 'anomaly', anomalyPayload(teamId, body));
    },

    /** The job a denoise request queued before, if any (see find); queues nothing. */
    findDenoise(teamId: number, codebookId: number, body: DenoiseJobBody): Promise<{ job: ModelJobView | null }> {
      return find(teamId, codebookId, 'denoise', denoisePayload(teamId, body));
    },

    /** A model job's state and progress, with its result once it has succeeded. */
    status,

    /** Cancels a queued or running model job (409 once it has ended). */
    async cancel(teamId: number, actorUserId: number, jobId: number): Promise<ModelJobView> {
      const requested = await db.transaction(async (tx) => {
        const job = await mustFindJob(tx, teamId, jobId);
        if (terminalJobStates.includes(job.state)) throw conflict(`The job has already ${job.state === 'cancelled' ? 'been cancelled' : 'ended'}`, { state: job.state });
        const outcome = await tx.jobs.cancel(jobId);
        await recordAudit(tx, { teamId, actorUserId, action: `${job.kind}.cancelled`, targetType: 'codebook', targetId: job.codebookId, details: { jobId } });
        return outcome === 'requested';
      });
      if (requested) deps.bus.requestCancel(jobId);
      return status(teamId, jobId);
    },

    /** One PNG of a finished denoise job. */
    async view(teamId: number, jobId: number, view: string): Promise<Buffer> {
      await mustFindJob(db.repos, teamId, jobId);
      const png = await db.repos.modelResults.view(jobId, view);
      if (!png) throw notFound('View');
      return png;
    },
  };
}

export type CodebookModelService = ReturnType<typeof createCodebookModelService>;
