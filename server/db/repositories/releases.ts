import { iso, isoOrNull } from '../rows';
import { insertedId, type Executor } from './executor';

export type ReleaseState = 'proposed' | 'returned' | 'approved';
export type ReleaseCommentKind = 'proposed' | 'returned' | 'approved';

export interface PersonRef {
  id: number;
  name: string;
}

export interface ReleaseRecord {
  id: number;
  teamId: number;
  codebookId: number;
  codebookName: string;
  runId: number | null;
  state: ReleaseState;
  name: string;
  version: string;
  note: string;
  proposedBy: PersonRef | null;
  proposedAt: string;
  reviewedBy: PersonRef | null;
  reviewedAt: string | null;
  checksum: string | null;
  heldOutHash: string | null;
  evaluationId: number | null;
  releasedAt: string | null;
}

export interface ReleaseCommentRecord {
  id: number;
  kind: ReleaseCommentKind;
  body: string;
  author: PersonRef | null;
  createdAt: string;
}

interface ReleaseRow {
  id: number;
  team_id: number;
  codebook_id: number;
  codebook_name: string;
  run_id: number | null;
  state: ReleaseState;
  name: string;
  version: string;
  note: string;
  proposed_by: number | null;
  proposer_name: string | null;
  proposed_at: Date;
  reviewed_by: number | null;
  reviewer_name: string | null;
  reviewed_at: Date | null;
  checksum: string | null;
  held_out_hash: string | null;
  evaluation_id: number | null;
  released_at: Date | null;
}

const person = (id: number | null, name: string | null): PersonRef | null => (id === null ? null : { id, name: name ?? '' });

function toRelease(r: ReleaseRow): ReleaseRecord {
  return {
    id: r.id,
    teamId: r.team_id,
    codebookId: r.codebook_id,
    codebookName: r.codebook_name,
    runId: r.run_id,
    state: r.state,
    name: r.name,
    version: r.version,
    note: r.note,
    proposedBy: person(r.proposed_by, r.proposer_name),
    proposedAt: iso(r.proposed_at),
    reviewedBy: person(r.reviewed_by, r.reviewer_name),
    reviewedAt: isoOrNull(r.reviewed_at),
    checksum: r.checksum,
    heldOutHash: r.held_out_hash,
    evaluationId: r.evaluation_id,
    releasedAt: isoOrNull(r.released_at),
  };
}

export function releasesRepository(db: Executor) {
  const base = () =>
    db('releases as r')
      .join('codebooks as c', 'c.id', 'r.codebook_id')
      .leftJoin('users as p', 'p.id', 'r.proposed_by')
      .leftJoin('users as v', 'v.id', 'r.reviewed_by')
      .select(
        'r.*',
        'c.name as codebook_name',
        'c.run_id as run_id',
        'p.name as proposer_name',
        'v.name as reviewer_name',
      );

  return {
    async listForTeam(teamId: number): Promise<ReleaseRecord[]> {
      const rows = (await base().where('r.team_id', teamId).orderBy('r.id', 'desc')) as ReleaseRow[];
      return rows.map(toRelease);
    },

    /** `forUpdate` locks the row, so two reviewers of one proposal are served one after the other. */
    async find(teamId: number, id: number, options: { forUpdate?: boolean } = {}): Promise<ReleaseRecord | null> {
      const q = base().where({ 'r.team_id': teamId, 'r.id': id }).first();
      const row = (await (options.forUpdate ? q.forUpdate() : q)) as ReleaseRow | undefined;
      return row ? toRelease(row) : null;
    },

    async findForCodebook(codebookId: number, options: { forUpdate?: boolean } = {}): Promise<ReleaseRecord | null> {
      const q = base().where('r.codebook_id', codebookId).first();
      const row = (await (options.forUpdate ? q.forUpdate() : q)) as ReleaseRow | undefined;
      return row ? toRelease(row) : null;
    },

    async findByNameVersion(teamId: number, name: string, version: string): Promise<ReleaseRecord | null> {
      const row = (await base().where({ 'r.team_id': teamId, 'r.name': name, 'r.version': version }).first()) as ReleaseRow | undefined;
      return row ? toRelease(row) : null;
    },

    /** Reviews (any state) of the given codebooks, e.g. those of a run about to be deleted. */
    async listForCodebooks(codebookIds: number[]): Promise<ReleaseRecord[]> {
      if (codebookIds.length === 0) return [];
      const rows = (await base().whereIn('r.codebook_id', codebookIds)) as ReleaseRow[];
      return rows.map(toRelease);
    },

    /** Released codebooks whose pinned evaluation measured any of these images. */
    async releasedUsingImages(teamId: number, imageIds: number[]): Promise<{ name: string; version: string }[]> {
      if (imageIds.length === 0) return [];
      return (await db('releases as r')
        .join('evaluation_images as ei', 'ei.evaluation_id', 'r.evaluation_id')
        .where({ 'r.team_id': teamId, 'r.state': 'approved' })
        .whereIn('ei.image_id', imageIds)
        .distinct('r.name', 'r.version')) as { name: string; version: string }[];
    },

    /** Jobs not yet finished that could still write this codebook's results (its own, or its run's). */
    async openJobs(codebookId: number, runId: number | null): Promise<number> {
      const q = db('jobs').whereIn('state', ['queued', 'running']).andWhere((w) => {
        w.where('codebook_id', codebookId);
        if (runId !== null) w.orWhere('run_id', runId);
      });
      const row = (await q.count({ n: '*' }).first()) as { n: number | string } | undefined;
      return Number(row?.n ?? 0);
    },

    async insertProposal(p: { teamId: number; codebookId: number; name: string; version: string; note: string; proposedBy: number; now: Date }): Promise<number> {
      const result = await db('releases').insert({
        team_id: p.teamId,
        codebook_id: p.codebookId,
        state: 'proposed',
        name: p.name,
        version: p.version,
        note: p.note,
        proposed_by: p.proposedBy,
        proposed_at: p.now,
      });
      return insertedId(result);
    },

    /** A returned proposal proposed again: the reviewer's fields are cleared for the next review. */
    async repropose(id: number, p: { name: string; version: string; note: string; proposedBy: number; now: Date }): Promise<void> {
      await db('releases').where({ id, state: 'returned' }).update({
        state: 'proposed',
        name: p.name,
        version: p.version,
        note: p.note,
        proposed_by: p.proposedBy,
        proposed_at: p.now,
        reviewed_by: null,
        reviewed_at: null,
      });
    },

    async markReturned(id: number, reviewerId: number, now: Date): Promise<void> {
      await db('releases').where({ id, state: 'proposed' }).update({ state: 'returned', reviewed_by: reviewerId, reviewed_at: now });
    },

    async markApproved(id: number, a: { reviewerId: number; now: Date; checksum: string; heldOutHash: string; evaluationId: number }): Promise<void> {
      await db('releases').where({ id, state: 'proposed' }).update({
        state: 'approved',
        reviewed_by: a.reviewerId,
        reviewed_at: a.now,
        released_at: a.now,
        checksum: a.checksum,
        held_out_hash: a.heldOutHash,
        evaluation_id: a.evaluationId,
      });
    },

    /** Unreleased reviews go with their codebooks (a run's deletion); a released one is refused before this. */
    async removeUnreleased(codebookIds: number[]): Promise<void> {
      if (codebookIds.length === 0) return;
      await db('releases').whereIn('codebook_id', codebookIds).whereNot('state', 'approved').delete();
    },

    async addComment(c: { releaseId: number; authorUserId: number; kind: ReleaseCommentKind; body: string; now: Date }): Promise<void> {
      await db('release_comments').insert({ release_id: c.releaseId, author_user_id: c.authorUserId, kind: c.kind, body: c.body, created_at: c.now });
    },

    async comments(releaseId: number): Promise<ReleaseCommentRecord[]> {
      const rows = (await db('release_comments as rc')
        .leftJoin('users as u', 'u.id', 'rc.author_user_id')
        .where('rc.release_id', releaseId)
        .orderBy('rc.id')
        .select('rc.*', 'u.name as author_name')) as {
        id: number;
        kind: ReleaseCommentKind;
        body: string;
        author_user_id: number | null;
        author_name: string | null;
        created_at: Date;
      }[];
      return rows.map((r) => ({ id: r.id, kind: r.kind, body: r.body, author: person(r.author_user_id, r.author_name), createdAt: iso(r.created_at) }));
    },
  };
}

export type ReleasesRepository = ReturnType<typeof releasesRepository>;
