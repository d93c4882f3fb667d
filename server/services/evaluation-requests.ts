import type { EvaluateBatchPayload, EvaluateCodebookBody } from '../contracts';
import type { Database, Repositories } from '../db';
import type { RunImageRecord } from '../db/repositories/runs';
import { badRequest, notFound } from '../errors';
import { recordAudit } from './audit';
import { heldOutHash as heldOutHashOf } from './held-out-hash';
import { refuseIfReleased } from './releases';

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

/** Queues evaluations: the evaluate job itself lives with its handler (server/jobs/handlers/evaluate.ts); batches in evaluation-batches.ts. */
export function createEvaluationRequests(deps: { db: Database; jobQueued?: () => void }) {
  const { db } = deps;
  return {
    /** Queues an evaluation of one codebook (typically imported) on a held-out list of the team. */
    async requestEvaluation(teamId: number, actorUserId: number, codebookId: number, body: EvaluateCodebookBody) {
      const queued = await db.transaction(async (tx) => {
        const codebook = await tx.codebooks.findForTeam(teamId, codebookId);
        if (!codebook) throw notFound('Codebook');
        await refuseIfReleased(tx, [codebookId], 'The codebook cannot be evaluated again');
        const images = await resolveImages(tx, teamId, body);
        const heldOutHash = heldOutHashOf(images.map((i) => i.sha256));
        const heldOutImageIds = images.map((i) => i.id);
        // A list's name says where its images come from: the set named, or the one set every chosen image is in.
        const setIds = [...new Set(images.map((i) => i.setId))];
        const fromSet = body.heldOutSetId ?? (setIds.length === 1 ? setIds[0] : undefined);
        const sourceName = fromSet === undefined ? null : ((await tx.imageSets.find(teamId, fromSet))?.name ?? null);
        const setName = sourceName === null ? null : body.heldOutSetId !== undefined ? sourceName : `${sourceName} (${images.length} chosen images)`;
        // A batch of one codebook on one list: the batch routes give its status, cancel it and show its failure.
        const payload: EvaluateBatchPayload = {
          codebookIds: [codebookId],
          sets: [{ setId: body.heldOutSetId ?? null, name: setName ?? 'chosen images', imageIds: heldOutImageIds, heldOutHash }],
        };
        const jobId = await tx.jobs.insert({ teamId, codebookId, kind: 'evaluate', payload, createdBy: actorUserId });
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
  };
}
