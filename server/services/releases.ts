import type { ApproveReleaseBody, ProposeReleaseBody, ReleaseDetail, ReleaseSummary, ReturnReleaseBody } from '../contracts';
import type { Database, ReleaseRecord, Repositories } from '../db';
import { conflict, forbidden, isAppError, notFound } from '../errors';
import { recordAudit } from './audit';

function toSummary(r: ReleaseRecord): ReleaseSummary {
  return {
    id: r.id,
    codebookId: r.codebookId,
    codebookName: r.codebookName,
    runId: r.runId,
    state: r.state,
    name: r.name,
    version: r.version,
    note: r.note,
    proposedBy: r.proposedBy,
    proposedAt: r.proposedAt,
    reviewedBy: r.reviewedBy,
    reviewedAt: r.reviewedAt,
    checksum: r.checksum,
    heldOutHash: r.heldOutHash,
    releasedAt: r.releasedAt,
  };
}

const label = (r: { name: string; version: string }) => `${r.name} ${r.version}`;

/**
 * The one rule of a release: a released codebook is frozen. Every path that would change or remove a codebook, its
 * evaluation or what they were measured on asks here first, inside its transaction, and is refused with 409.
 */
export async function refuseIfReleased(repos: Repositories, codebookIds: number[], change: string): Promise<void> {
  const released = (await repos.releases.listForCodebooks(codebookIds)).filter((r) => r.state === 'approved');
  if (released.length === 0) return;
  throw conflict(`${change}: ${released.length === 1 ? 'codebook' : 'codebooks'} released as ${released.map(label).join(', ')} ${released.length === 1 ? 'is' : 'are'} frozen`, {
    reason: 'released',
    releases: released.map((r) => ({ id: r.id, codebookId: r.codebookId, name: r.name, version: r.version })),
  });
}

/** The same rule for images: one that a released codebook's pinned evaluation measured cannot be deleted. */
export async function refuseIfImagesReleased(repos: Repositories, teamId: number, imageIds: number[], what: string): Promise<void> {
  const released = await repos.releases.releasedUsingImages(teamId, imageIds);
  if (released.length === 0) return;
  throw conflict(`${what} cannot be deleted: the evaluation of ${released.map(label).join(', ')} measured it, and a release is frozen`, {
    reason: 'released',
    releases: released,
  });
}

const nameTaken = (b: { name: string; version: string }) =>
  conflict(`The team already has a release named ${label(b)}: choose another name or version`, { field: 'version', reason: 'release_exists' });

/**
 * Review and release of codebooks: an engineer or admin proposes a codebook with a release name, version and note;
 * another engineer or admin (never the proposer) approves it, which releases and freezes it, or returns it with a
 * comment, after which it can be proposed again. Every step is one transaction with its thread entry and audit entry.
 */
export function createReleasesService(deps: { db: Database; now?: () => Date }) {
  const { db } = deps;
  const now = deps.now ?? (() => new Date());

  async function detail(r: ReleaseRecord): Promise<ReleaseDetail> {
    return { ...toSummary(r), thread: await db.repos.releases.comments(r.id) };
  }

  async function mustFind(teamId: number, id: number): Promise<ReleaseRecord> {
    const r = await db.repos.releases.find(teamId, id);
    if (!r) throw notFound('Release');
    return r;
  }

  /** The reviewed proposal, locked, checked to be awaiting review and not the reviewer's own. */
  async function reviewable(tx: Repositories, teamId: number, id: number, reviewerId: number): Promise<ReleaseRecord> {
    const r = await tx.releases.find(teamId, id, { forUpdate: true });
    if (!r) throw notFound('Release');
    if (r.state === 'approved') throw conflict(`The codebook is already released as ${label(r)}`, { state: r.state });
    if (r.state === 'returned') throw conflict('The proposal was returned: it must be proposed again before it is reviewed', { state: r.state });
    if (r.proposedBy?.id === reviewerId) throw forbidden('You proposed this codebook: another engineer or an admin reviews it');
    return r;
  }

  async function propose(teamId: number, userId: number, codebookId: number, body: ProposeReleaseBody): Promise<ReleaseDetail> {
    let id: number;
    try {
      id = await db.transaction(async (tx) => {
        const codebook = await tx.codebooks.findForTeam(teamId, codebookId);
        if (!codebook) throw notFound('Codebook');
        const existing = await tx.releases.findForCodebook(codebookId, { forUpdate: true });
        if (existing?.state === 'approved') throw conflict(`The codebook is already released as ${label(existing)}`, { state: existing.state });
        if (existing?.state === 'proposed') throw conflict(`The codebook is already proposed as ${label(existing)} and awaits review`, { state: existing.state });
        if ((await tx.evaluations.listForCodebook(codebookId)).length === 0) {
          throw conflict('The codebook has no evaluation on held-out images yet: evaluate it before proposing it', { reason: 'not_evaluated' });
        }
        const clash = await tx.releases.findByNameVersion(teamId, body.name, body.version);
        if (clash && clash.id !== existing?.id) throw nameTaken(body);
        const at = now();
        const releaseId = existing
          ? (await tx.releases.repropose(existing.id, { ...body, proposedBy: userId, now: at }), existing.id)
          : await tx.releases.insertProposal({ teamId, codebookId, ...body, proposedBy: userId, now: at });
        await tx.releases.addComment({ releaseId, authorUserId: userId, kind: 'proposed', body: body.note, now: at });
        await recordAudit(tx, {
          teamId,
          actorUserId: userId,
          action: 'release.proposed',
          targetType: 'release',
          targetId: releaseId,
          details: { codebookId, name: body.name, version: body.version, again: Boolean(existing) },
        });
        return releaseId;
      });
    } catch (err) {
      // Two proposals racing (for one name and version, or of one codebook): a unique index decides, and the loser
      // hears which.
      if (isAppError(err) && err.status === 409 && err.details === undefined) {
        const holder = await db.repos.releases.findByNameVersion(teamId, body.name, body.version);
        if (holder && holder.codebookId !== codebookId) throw nameTaken(body);
        throw conflict('The codebook was proposed by someone else at the same moment', { reason: 'proposed' });
      }
      throw err;
    }
    return detail(await mustFind(teamId, id));
  }

  async function approve(teamId: number, userId: number, id: number, body: ApproveReleaseBody): Promise<ReleaseDetail> {
    await db.transaction(async (tx) => {
      const r = await reviewable(tx, teamId, id, userId);
      const codebook = await tx.codebooks.findForTeam(teamId, r.codebookId);
      if (!codebook) throw notFound('Codebook');
      if ((await tx.releases.openJobs(codebook.id, codebook.runId)) > 0) {
        throw conflict('A job for this codebook or its run has not finished: approve it once its results are final', { reason: 'jobs_open' });
      }
      // The evaluation that is pinned: on the run's held-out list for a trained codebook, else the latest one.
      const run = codebook.runId === null ? null : await tx.runs.findById(codebook.runId);
      const evaluations = await tx.evaluations.listForCodebook(codebook.id);
      const evaluation = (run && evaluations.find((e) => e.heldOutHash === run.heldOutHash)) || evaluations.at(-1);
      if (!evaluation) throw conflict('The codebook has no evaluation on held-out images', { reason: 'not_evaluated' });
      const at = now();
      await tx.releases.markApproved(id, { reviewerId: userId, now: at, checksum: codebook.checksum, heldOutHash: evaluation.heldOutHash, evaluationId: evaluation.id });
      await tx.releases.addComment({ releaseId: id, authorUserId: userId, kind: 'approved', body: body.comment ?? '', now: at });
      await recordAudit(tx, {
        teamId,
        actorUserId: userId,
        action: 'release.approved',
        targetType: 'release',
        targetId: id,
        details: { codebookId: codebook.id, name: r.name, version: r.version, checksum: codebook.checksum, heldOutHash: evaluation.heldOutHash },
      });
    });
    return detail(await mustFind(teamId, id));
  }

  async function sendBack(teamId: number, userId: number, id: number, body: ReturnReleaseBody): Promise<ReleaseDetail> {
    await db.transaction(async (tx) => {
      const r = await reviewable(tx, teamId, id, userId);
      const at = now();
      await tx.releases.markReturned(id, userId, at);
      await tx.releases.addComment({ releaseId: id, authorUserId: userId, kind: 'returned', body: body.comment, now: at });
      await recordAudit(tx, {
        teamId,
        actorUserId: userId,
        action: 'release.returned',
        targetType: 'release',
        targetId: id,
        details: { codebookId: r.codebookId, name: r.name, version: r.version },
      });
    });
    return detail(await mustFind(teamId, id));
  }

  return {
    async list(teamId: number): Promise<ReleaseSummary[]> {
      return (await db.repos.releases.listForTeam(teamId)).map(toSummary);
    },
    async get(teamId: number, id: number): Promise<ReleaseDetail> {
      return detail(await mustFind(teamId, id));
    },
    /** The review of one codebook, or null when it was never proposed (the codebook page shows its state). */
    async forCodebook(teamId: number, codebookId: number): Promise<ReleaseDetail | null> {
      if (!(await db.repos.codebooks.findForTeam(teamId, codebookId))) throw notFound('Codebook');
      const r = await db.repos.releases.findForCodebook(codebookId);
      return r ? detail(r) : null;
    },
    propose,
    approve,
    sendBack,
  };
}

export type ReleasesService = ReturnType<typeof createReleasesService>;
