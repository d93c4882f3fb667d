import {
  RESIDUAL_DEFAULT_STAGES,
  RUN_DEFAULTS as DEFAULTS,
  terminalJobStates,
  type CreateRunBody,
  type JobState,
  type JobSummary,
  type NormalizedRunConfig,
  type RenameRunBody,
  type RunDetail,
  type RunSummary,
} from '../contracts';
import type { Database, JobRecord, RunImageRecord, RunRecord } from '../db';
import { conflict, notFound, validationFailed } from '../errors';
import type { JobEvent, JobEventBus } from '../jobs/events';
import { heldOutHash } from './held-out-hash';
import { recordAudit } from './audit';
import { refreshRunState } from './run-state';
import { refuseIfReleased } from './releases';
import { runTrainingMemory, trainingMemoryExcess, type TrainingLimits } from './training-memory';

// Defaults of the optional run settings are the run vocabulary's (server/engine/vocabulary.ts), as the engine's are.

// A run's progress bar: training is most of the time, measuring the held-out images the rest.
const TRAIN_SHARE = 0.8;

const isTerminal = (s: JobState) => terminalJobStates.includes(s);

/** A job as the API shows it (runs and evaluation batches alike). */
export function toJobSummary(j: JobRecord): JobSummary {
  return {
    id: j.id,
    kind: j.kind,
    state: j.state,
    progress: j.progress,
    error: j.error,
    attempts: j.attempts,
    cancelRequested: j.cancelRequested,
    createdAt: j.createdAt,
    startedAt: j.startedAt,
    finishedAt: j.finishedAt,
    servedBy: j.servedBy ?? [],
  };
}

function jobFraction(j: JobRecord | undefined): number {
  if (!j) return 0;
  if (j.state === 'succeeded') return 1;
  return j.state === 'running' ? (j.progress?.fraction ?? 0) : 0;
}

function runProgress(run: RunRecord, jobs: JobRecord[]): number {
  if (run.state === 'succeeded') return 1;
  const train = jobs.filter((j) => j.kind === 'train').at(-1);
  const evaluate = jobs.filter((j) => j.kind === 'evaluate').at(-1);
  return Math.min(1, TRAIN_SHARE * jobFraction(train) + (1 - TRAIN_SHARE) * jobFraction(evaluate));
}

export function createRunsService(deps: { db: Database; bus: JobEventBus; training: TrainingLimits }) {
  const { db, bus } = deps;

  async function resolveImages(teamId: number, body: CreateRunBody): Promise<{ training: RunImageRecord[]; heldOut: RunImageRecord[] }> {
    const issues: { path: string; message: string }[] = [];
    const byIds = async (ids: number[], path: string) => {
      const found = await db.repos.runs.teamImages(teamId, ids);
      const have = new Set(found.map((i) => i.id));
      const missing = [...new Set(ids)].filter((id) => !have.has(id));
      if (missing.length > 0) issues.push({ path, message: `no image ${missing.slice(0, 20).join(', ')} in this team` });
      return found;
    };
    const bySet = async (setId: number, path: string) => {
      const images = await db.repos.runs.setImages(teamId, setId);
      if (images === null) issues.push({ path, message: `no image set ${setId} in this team` });
      return images ?? [];
    };
    let training: RunImageRecord[];
    let heldOut: RunImageRecord[];
    if (body.trainingSetId !== undefined && body.trainingSetId === body.heldOutSetId) {
      // One set for both sides: its images' roles say which side each is on.
      const images = await bySet(body.trainingSetId, 'trainingSetId');
      training = images.filter((i) => i.role === 'training');
      heldOut = images.filter((i) => i.role === 'held-out');
    } else {
      training = body.trainingImageIds ? await byIds(body.trainingImageIds, 'trainingImageIds') : await bySet(body.trainingSetId!, 'trainingSetId');
      heldOut = body.heldOutImageIds ? await byIds(body.heldOutImageIds, 'heldOutImageIds') : await bySet(body.heldOutSetId!, 'heldOutSetId');
    }
    if (issues.length === 0) {
      if (training.length === 0) issues.push({ path: body.trainingImageIds ? 'trainingImageIds' : 'trainingSetId', message: 'needs at least one training image' });
      if (heldOut.length === 0) issues.push({ path: body.heldOutImageIds ? 'heldOutImageIds' : 'heldOutSetId', message: 'needs at least one held-out image' });
      // Compared by content too: a copy of a training image in another set would still flatter the results.
      const trainingIds = new Set(training.map((i) => i.id));
      const trainingHashes = new Set(training.map((i) => i.sha256));
      const both = heldOut.filter((i) => trainingIds.has(i.id) || trainingHashes.has(i.sha256));
      if (both.length > 0) {
        issues.push({ path: 'heldOutImageIds', message: `image ${both.slice(0, 20).map((i) => i.id).join(', ')} is also a training image; an image is either trained on or held out` });
      }
    }
    if (issues.length > 0) throw validationFailed('The run cannot use these images', issues);
    return { training, heldOut };
  }

  function normalize(body: CreateRunBody, training: RunImageRecord[], heldOut: RunImageRecord[]): NormalizedRunConfig {
    const bits = typeof body.bits === 'number' ? { from: body.bits, to: body.bits } : { from: body.bits.from, to: body.bits.to };
    const sizes: number[] = [];
    for (let b = bits.from; b <= bits.to; b += 1) sizes.push(2 ** b);
    const cfg: NormalizedRunConfig = {
      trainingImageIds: training.map((i) => i.id),
      heldOutImageIds: heldOut.map((i) => i.id),
      patch: { width: body.patch.width, height: body.patch.height },
      ...(body.stride === undefined ? {} : { stride: body.stride }),
      color: body.color ?? DEFAULTS.color,
      meanBits: body.meanBits ?? DEFAULTS.meanBits,
      bits,
      sizes,
      init: body.init ?? DEFAULTS.init,
      epsilon: body.epsilon ?? DEFAULTS.epsilon,
      maxIterations: body.maxIterations ?? DEFAULTS.maxIterations,
      maxVectors: body.maxVectors ?? DEFAULTS.maxVectors,
      seed: body.seed ?? DEFAULTS.seed,
      ...(body.lambdas ? { lambdas: [...new Set(body.lambdas)] } : {}),
      ...(body.structure === 'tree' ? { structure: { kind: 'tree' as const, ...(body.growth === 'greedy' ? { growth: body.growth } : {}) } } : {}),
      ...(body.structure === 'residual'
        ? { structure: { kind: 'residual' as const, stages: body.stages ?? RESIDUAL_DEFAULT_STAGES, mBest: body.mBest ?? null, refinementPasses: body.refinementPasses ?? 0 } }
        : {}),
    };
    const memory = runTrainingMemory(cfg, training, deps.training);
    const usable = memory.vectors;
    const largest = 2 ** bits.to;
    if (usable < largest) {
      throw validationFailed('Too few training vectors for the largest codebook', [
        { path: 'bits', message: `the training images give ${usable} vectors of ${cfg.patch.width}×${cfg.patch.height}; b = ${bits.to} needs at least ${largest}` },
      ]);
    }
    const excess = trainingMemoryExcess(memory, deps.training.maxBytes);
    if (excess) {
      // On the vector cap when the vectors are most of it, else on the images: the field a person would change.
      const path = memory.vectorBytes >= memory.imageBytes ? 'maxVectors' : body.trainingImageIds ? 'trainingImageIds' : 'trainingSetId';
      throw validationFailed('Training this run would need more memory than this studio allows', [{ path, ...excess }]);
    }
    return cfg;
  }

  async function detail(run: RunRecord): Promise<RunDetail> {
    const [jobs, codebooks, best] = await Promise.all([
      db.repos.jobs.listForRun(run.id),
      db.repos.codebooks.listForRun(run.id),
      db.repos.runs.bestPoints([run.id]),
    ]);
    return {
      ...summary(run, jobs, best.get(run.id) ?? null),
      config: run.submitted,
      normalized: run.normalized,
      jobs: jobs.map(toJobSummary),
      codebooks: codebooks.map((c) => ({
        id: c.id,
        bits: c.bits,
        size: c.size,
        distortion: c.distortion,
        iterations: c.iterations,
        structure: c.structure,
        lambda: c.lambda,
        checksum: c.checksum,
      })),
    };
  }

  function summary(run: RunRecord, jobs: JobRecord[], best: RunSummary['bestOperatingPoint']): RunSummary {
    return {
      id: run.id,
      name: run.name,
      notes: run.notes,
      state: run.state,
      error: run.error,
      createdBy: run.createdBy ? { id: run.createdBy.id, name: run.createdBy.name } : null,
      createdAt: run.createdAt,
      finishedAt: run.finishedAt,
      heldOutHash: run.heldOutHash,
      progress: runProgress(run, jobs),
      bestOperatingPoint: best,
    };
  }

  async function mustFind(teamId: number, runId: number): Promise<RunRecord> {
    const run = await db.repos.runs.findForTeam(teamId, runId);
    if (!run) throw notFound('Run');
    return run;
  }

  return {
    async create(teamId: number, userId: number, body: CreateRunBody): Promise<RunDetail> {
      const { training, heldOut } = await resolveImages(teamId, body);
      const normalized = normalize(body, training, heldOut);
      const runId = await db.transaction(async (tx) => {
        const id = await tx.runs.insert({
          teamId,
          name: body.name,
          notes: body.notes ?? null,
          submitted: body,
          normalized,
          createdBy: userId,
          heldOutHash: heldOutHash(heldOut.map((i) => i.sha256)),
        });
        await tx.runs.insertImages(id, [
          ...training.map((i) => ({ imageId: i.id, role: 'training' as const })),
          ...heldOut.map((i) => ({ imageId: i.id, role: 'held-out' as const })),
        ]);
        const jobId = await tx.jobs.insert({ teamId, runId: id, kind: 'train', createdBy: userId });
        await refreshRunState(tx, id);
        await recordAudit(tx, {
          teamId,
          actorUserId: userId,
          action: 'run.created',
          targetType: 'run',
          targetId: id,
          details: { name: body.name, jobId, sizes: normalized.sizes, training: training.length, heldOut: heldOut.length },
        });
        return id;
      });
      bus.jobQueued();
      return detail((await db.repos.runs.findById(runId))!);
    },

    async list(teamId: number): Promise<RunSummary[]> {
      const runs = await db.repos.runs.listForTeam(teamId);
      const ids = runs.map((r) => r.id);
      const [jobs, best] = await Promise.all([db.repos.jobs.listForRuns(ids), db.repos.runs.bestPoints(ids)]);
      return runs.map((r) => summary(r, jobs.filter((j) => j.runId === r.id), best.get(r.id) ?? null));
    },

    async get(teamId: number, runId: number): Promise<RunDetail> {
      return detail(await mustFind(teamId, runId));
    },

    /** Cancels the run's queued jobs at once and asks the runner to abort its running one. */
    async cancel(teamId: number, userId: number, runId: number): Promise<RunDetail> {
      const requested = await db.transaction(async (tx) => {
        const run = await tx.runs.findForTeam(teamId, runId);
        if (!run) throw notFound('Run');
        const jobs = await tx.jobs.listForRun(runId, { forUpdate: true });
        const open = jobs.filter((j) => !isTerminal(j.state));
        if (open.length === 0) throw conflict(`The run has already ${run.state === 'cancelled' ? 'been cancelled' : 'finished'}`, { state: run.state });
        const running: number[] = [];
        for (const j of open) if ((await tx.jobs.cancel(j.id)) === 'requested') running.push(j.id);
        await refreshRunState(tx, runId);
        await recordAudit(tx, { teamId, actorUserId: userId, action: 'run.cancelled', targetType: 'run', targetId: runId, details: { jobs: open.map((j) => j.id) } });
        return running;
      });
      for (const id of requested) bus.requestCancel(id);
      return detail(await mustFind(teamId, runId));
    },

    async rename(teamId: number, userId: number, runId: number, body: RenameRunBody): Promise<RunDetail> {
      await db.transaction(async (tx) => {
        const run = await tx.runs.findForTeam(teamId, runId);
        if (!run) throw notFound('Run');
        // The run's name is the released codebook's origin and export file name: frozen with it.
        await refuseIfReleased(tx, (await tx.codebooks.listForRun(runId)).map((c) => c.id), 'The run cannot be renamed');
        await tx.runs.rename(runId, body.name);
        await recordAudit(tx, { teamId, actorUserId: userId, action: 'run.renamed', targetType: 'run', targetId: runId, details: { from: run.name, to: body.name } });
      });
      return detail(await mustFind(teamId, runId));
    },

    /**
     * Deletes a run with its trained codebooks, their evaluations and reconstructions (see runs.remove). A queued
     * job goes with it (nothing has started); a running one is refused with 409, because its worker would go on
     * writing results for a run that is gone: cancel the run first, then delete it.
     */
    async remove(teamId: number, userId: number, runId: number): Promise<void> {
      await db.transaction(async (tx) => {
        const run = await tx.runs.findForTeam(teamId, runId);
        if (!run) throw notFound('Run');
        const open = await tx.runs.lockOpenJobs(runId);
        if (open.some((j) => j.state === 'running')) throw conflict('The run is still running: cancel it first, then delete it', { state: run.state });
        const codebooks = await tx.codebooks.listForRun(runId);
        // Deleting the run would take its codebooks with it: a released one is refused here (and its RESTRICT
        // reference would refuse it in the database too); reviews not yet approved go with their codebooks.
        await refuseIfReleased(tx, codebooks.map((c) => c.id), 'The run cannot be deleted');
        await tx.releases.removeUnreleased(codebooks.map((c) => c.id));
        await tx.runs.remove(runId);
        await recordAudit(tx, {
          teamId,
          actorUserId: userId,
          action: 'run.deleted',
          targetType: 'run',
          targetId: runId,
          details: { name: run.name, state: run.state, codebooks: codebooks.length, queuedJobs: open.map((j) => j.id) },
        });
      });
    },

    /**
     * A live view of one run for server-sent events: subscribes first and buffers, then reads the snapshot, so
     * no event between the two is lost. `listen` delivers the buffer and then live events; after the run reaches
     * a terminal state it delivers `end` with the final detail and stops.
     */
    async watch(teamId: number, runId: number) {
      const buffered: JobEvent[] = [];
      let deliver: ((e: JobEvent) => void) | null = null;
      const unsubscribe = bus.subscribeRun(runId, (e) => (deliver ? deliver(e) : buffered.push(e)));
      let run: RunRecord;
      try {
        run = await mustFind(teamId, runId);
      } catch (err) {
        unsubscribe();
        throw err;
      }
      const snapshot = await detail(run);
      let closed = false;
      const close = () => {
        closed = true;
        unsubscribe();
      };
      return {
        snapshot,
        terminal: isTerminal(snapshot.state),
        close,
        listen(send: (event: 'progress' | 'state' | 'end', data: unknown) => void) {
          let ending = false;
          deliver = (e) => {
            if (closed || ending) return;
            if (e.type === 'progress') {
              send('progress', { runId, jobId: e.jobId, kind: e.kind, progress: e.progress });
              return;
            }
            send('state', { runId, jobId: e.jobId, kind: e.kind, state: e.state, error: e.error, runState: e.runState ?? run.state });
            if (e.runState && isTerminal(e.runState)) {
              ending = true;
              void mustFind(teamId, runId)
                .then(detail)
                .then((final) => !closed && send('end', { run: final }))
                .catch(() => !closed && send('end', { run: null }))
                .finally(close);
            }
          };
          for (const e of buffered.splice(0)) deliver(e);
        },
      };
    },
  };
}

export type RunsService = ReturnType<typeof createRunsService>;
