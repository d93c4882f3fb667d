import type { Logger } from '../config';
import type { Database, QueuedMailRecord, Repositories } from '../db';
import type { MailContent } from '../mail/templates';
import type { MailTransport } from './mail';

/** Mail a team's action causes: it shows in that team's Outbox. */
export const teamMailKinds = ['invitation', 'job_finished'] as const;
/** Mail about an account: it belongs to no team and never shows in an Outbox. */
export const accountMailKinds = ['password_reset', 'signup_link', 'signup_existing'] as const;
export type MailKind = (typeof teamMailKinds)[number] | (typeof accountMailKinds)[number];

export type QueuedMail =
  | { teamId: number; kind: (typeof teamMailKinds)[number]; to: string; content: MailContent }
  | { teamId: null; kind: (typeof accountMailKinds)[number]; to: string; content: MailContent };

/** What services need: put a message in the queue as part of their own transaction. */
export interface MailOutbox {
  /** Writes the message through `repos` (a transaction's, or the pool's); it is sent once that commits. */
  enqueue(repos: Repositories, mail: QueuedMail): Promise<void>;
}

export interface MailSenderOptions {
  db: Database;
  transport: MailTransport;
  logger: Logger;
  now: () => Date;
  /** Deliveries tried before a message is given up as failed. */
  maxAttempts: number;
  /** Wait before the first retry; it doubles with each attempt, up to retryMaxMs. */
  retryBaseMs: number;
  retryMaxMs: number;
  /** How often the queue is looked at when nothing woke the sender. */
  pollMs?: number;
  /** How long a claimed message is kept from other passes; longer than one SMTP exchange may take (nodemailer's timeouts add to 40 s). */
  leaseMs?: number;
}

export interface MailSender extends MailOutbox {
  /** Starts the timer and delivers whatever is due. */
  start(): void;
  /** Looks at the queue soon (called after a commit that queued mail). */
  wake(): void;
  /** Delivers every message due now and resolves when none is left (tests, and before a clean stop). */
  drain(): Promise<void>;
  /** Stops taking messages, lets the delivery in hand finish and leaves the rest queued for the next start. */
  stop(): Promise<void>;
}

const reasonOf = (err: unknown): string => {
  const e = err as { responseCode?: number; code?: string; message?: string };
  return [e?.responseCode, e?.code, e?.message].filter((p) => p !== undefined && p !== '').join(' ') || String(err);
};

/** RFC 5321 §4.2.1: a 5yz reply is a permanent failure (retrying cannot help); 4yz and lost connections are transient. */
const isPermanent = (err: unknown): boolean => {
  const code = (err as { responseCode?: number })?.responseCode;
  return typeof code === 'number' && code >= 500 && code < 600;
};

/**
 * The one way mail leaves the server: rows of mail_queue, written inside the business transaction and delivered
 * after it commits (a wake-up on commit, plus a timer), retried with exponential backoff a bounded number of times.
 * Delivery is at least once: a process that dies between SMTP's acceptance and the row update sends that message
 * again after the lease.
 */
export function createMailSender(options: MailSenderOptions): MailSender {
  const { db, transport, logger, now } = options;
  const pollMs = options.pollMs ?? 5_000;
  const leaseMs = options.leaseMs ?? 2 * 60_000;
  let started = false;
  let stopping = false;
  let timer: NodeJS.Timeout | undefined;
  let running: Promise<void> | null = null;
  let again = false;

  const wake = () => {
    if (started && !stopping) void pass();
  };

  async function deliver(mail: QueuedMailRecord): Promise<void> {
    try {
      await transport.send(mail.recipient, { subject: mail.subject, text: mail.text ?? '', html: mail.html ?? '' });
      await db.repos.mailQueue.markSent(mail.id, now());
    } catch (err) {
      const reason = reasonOf(err);
      if (isPermanent(err) || mail.attempts >= options.maxAttempts) {
        await db.repos.mailQueue.markFailed(mail.id, reason);
        logger.error({ mailId: mail.id, kind: mail.kind, attempts: mail.attempts, reason }, 'mail could not be delivered; given up');
      } else {
        const delay = Math.min(options.retryMaxMs, options.retryBaseMs * 2 ** (mail.attempts - 1));
        await db.repos.mailQueue.markRetry(mail.id, new Date(now().getTime() + delay), reason);
        logger.warn({ mailId: mail.id, kind: mail.kind, attempts: mail.attempts, retryInMs: delay, reason }, 'mail delivery failed; will retry');
      }
    }
  }

  async function untilEmpty(): Promise<void> {
    for (;;) {
      const at = now();
      const batch = await db.transaction((tx) => tx.mailQueue.claimDue(at, new Date(at.getTime() + leaseMs), 10));
      if (batch.length === 0) return;
      for (const [i, mail] of batch.entries()) {
        if (stopping) {
          // Hand back what this pass claimed but did not try, so the next start sends it at once.
          await db.repos.mailQueue.release(batch.slice(i).map((m) => m.id), now());
          return;
        }
        await deliver(mail);
      }
    }
  }

  function pass(): Promise<void> {
    if (stopping) return Promise.resolve();
    if (running) {
      again = true;
      return running;
    }
    running = (async () => {
      do {
        again = false;
        await untilEmpty();
      } while (again && !stopping);
    })()
      .catch((err: unknown) => logger.error({ err }, 'mail queue pass failed'))
      .finally(() => {
        running = null;
      });
    return running;
  }

  return {
    async enqueue(repos, mail) {
      await repos.mailQueue.insert({
        teamId: mail.teamId,
        kind: mail.kind,
        recipient: mail.to,
        subject: mail.content.subject,
        text: mail.content.text,
        html: mail.content.html,
        at: now(),
      });
      repos.afterCommit(wake);
    },
    start() {
      if (started) return;
      started = true;
      stopping = false;
      timer = setInterval(wake, pollMs);
      timer.unref();
      wake();
    },
    wake,
    async drain() {
      // A pass already under way may have claimed before the latest commit: wait for it, then run one more.
      if (running) await running;
      await pass();
    },
    async stop() {
      stopping = true;
      started = false;
      clearInterval(timer);
      if (running) await running;
    },
  };
}
