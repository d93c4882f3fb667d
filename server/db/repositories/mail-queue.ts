import { iso, isoOrNull } from '../rows';
import { insertedId, type Executor } from './executor';

export type MailStatus = 'queued' | 'sent' | 'failed';

export interface NewQueuedMail {
  teamId: number | null;
  kind: string;
  recipient: string;
  subject: string;
  text: string;
  html: string | null;
  /** Creation time, and the first moment the row may be sent. */
  at: Date;
}

export interface QueuedMailRecord {
  id: number;
  teamId: number | null;
  kind: string;
  recipient: string;
  subject: string;
  text: string | null;
  html: string | null;
  status: MailStatus;
  attempts: number;
  nextAttemptAt: string;
  lastError: string | null;
  createdAt: string;
  sentAt: string | null;
}

interface MailRow {
  id: number;
  team_id: number | null;
  kind: string;
  recipient: string;
  subject: string;
  text: string | null;
  html: string | null;
  status: MailStatus;
  attempts: number;
  next_attempt_at: Date;
  last_error: string | null;
  created_at: Date;
  sent_at: Date | null;
}

const toMail = (r: MailRow): QueuedMailRecord => ({
  id: Number(r.id),
  teamId: r.team_id,
  kind: r.kind,
  recipient: r.recipient,
  subject: r.subject,
  text: r.text,
  html: r.html,
  status: r.status,
  attempts: r.attempts,
  nextAttemptAt: iso(r.next_attempt_at),
  lastError: r.last_error,
  createdAt: iso(r.created_at),
  sentAt: isoOrNull(r.sent_at),
});

export function mailQueueRepository(db: Executor) {
  return {
    async insert(mail: NewQueuedMail): Promise<number> {
      return insertedId(
        await db('mail_queue').insert({
          team_id: mail.teamId,
          kind: mail.kind,
          recipient: mail.recipient.toLowerCase(),
          subject: mail.subject.slice(0, 500),
          text: mail.text,
          html: mail.html,
          status: 'queued',
          attempts: 0,
          next_attempt_at: mail.at,
          created_at: mail.at,
        }),
      );
    },
    /**
     * Takes up to `limit` rows due at `now` and leases them until `leaseUntil` (counting the attempt), so a
     * concurrent pass skips them (FOR UPDATE SKIP LOCKED) and a sender that dies leaves them due again.
     * Must run inside a transaction.
     */
    async claimDue(now: Date, leaseUntil: Date, limit: number): Promise<QueuedMailRecord[]> {
      const rows = (await db('mail_queue')
        .where({ status: 'queued' })
        .andWhere('next_attempt_at', '<=', now)
        .orderBy('next_attempt_at')
        .orderBy('id')
        .limit(limit)
        .forUpdate()
        .skipLocked()
        .select()) as MailRow[];
      if (rows.length === 0) return [];
      const ids = rows.map((r) => r.id);
      await db('mail_queue').whereIn('id', ids).update({ next_attempt_at: leaseUntil, attempts: db.raw('attempts + 1') });
      return rows.map((r) => toMail({ ...r, attempts: r.attempts + 1, next_attempt_at: leaseUntil }));
    },
    /** Hands claimed rows back untried (a stopping sender): due at `at`, the claim's attempt not counted. */
    async release(ids: number[], at: Date): Promise<void> {
      if (ids.length === 0) return;
      await db('mail_queue').whereIn('id', ids).andWhere({ status: 'queued' }).update({ next_attempt_at: at, attempts: db.raw('GREATEST(attempts, 1) - 1') });
    },
    /** Delivered; account mail (no team) loses its body, which may carry a one-time link. */
    async markSent(id: number, at: Date): Promise<void> {
      await db('mail_queue')
        .where({ id })
        .update({
          status: 'sent',
          sent_at: at,
          last_error: null,
          text: db.raw('CASE WHEN team_id IS NULL THEN NULL ELSE text END'),
          html: db.raw('CASE WHEN team_id IS NULL THEN NULL ELSE html END'),
        });
    },
    async markRetry(id: number, nextAttemptAt: Date, error: string): Promise<void> {
      await db('mail_queue').where({ id, status: 'queued' }).update({ next_attempt_at: nextAttemptAt, last_error: error.slice(0, 500) });
    },
    /** Given up: kept for the record (and the team's Outbox), with the reason. */
    async markFailed(id: number, error: string): Promise<void> {
      await db('mail_queue')
        .where({ id })
        .update({
          status: 'failed',
          last_error: error.slice(0, 500),
          text: db.raw('CASE WHEN team_id IS NULL THEN NULL ELSE text END'),
          html: db.raw('CASE WHEN team_id IS NULL THEN NULL ELSE html END'),
        });
    },
    /** The mail a team's own actions caused, newest first. */
    async listForTeam(teamId: number, limit = 200): Promise<QueuedMailRecord[]> {
      const rows = (await db('mail_queue').where({ team_id: teamId }).orderBy('id', 'desc').limit(limit).select()) as MailRow[];
      return rows.map(toMail);
    },
    /** How many mails of these kinds went to an address since `since` (to bound what a stranger can trigger). */
    async countRecent(recipient: string, kinds: readonly string[], since: Date): Promise<number> {
      const row = (await db('mail_queue')
        .where({ recipient: recipient.toLowerCase() })
        .whereIn('kind', kinds)
        .andWhere('created_at', '>=', since)
        .count({ n: '*' })
        .first()) as { n: number | string } | undefined;
      return Number(row?.n ?? 0);
    },
    async findById(id: number): Promise<QueuedMailRecord | null> {
      const row = (await db('mail_queue').where({ id }).first()) as MailRow | undefined;
      return row ? toMail(row) : null;
    },
  };
}

export type MailQueueRepository = ReturnType<typeof mailQueueRepository>;
