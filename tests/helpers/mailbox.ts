import type { Knex } from 'knex';
import { wrapKnex, type StoredMessage } from '../../server/db';

/**
 * Waits until the fake SMTP server has stored a message for `to` that matches; messages arrive
 * asynchronously (mail is queued in the request's transaction and delivered after it commits).
 */
export async function waitForMail(
  knex: Knex,
  to: string,
  options: { subject?: RegExp; afterId?: number; timeoutMs?: number } = {},
): Promise<StoredMessage> {
  const repos = wrapKnex(knex).repos;
  const deadline = Date.now() + (options.timeoutMs ?? 15_000);
  for (;;) {
    const messages = await repos.outbox.listForAddress(to);
    const hit = messages.find(
      (m) => m.id > (options.afterId ?? 0) && (!options.subject || options.subject.test(m.subject)),
    );
    if (hit) return hit;
    if (Date.now() > deadline) throw new Error(`no mail for ${to} matching ${options.subject ?? 'anything'} arrived`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

export async function mailFor(knex: Knex, to: string): Promise<StoredMessage[]> {
  return wrapKnex(knex).repos.outbox.listForAddress(to);
}

/** The one-time token in a `${PUBLIC_URL}/<kind>/<token>` link of a message's text. */
export function linkToken(message: { text: string | null }, kind: 'invite' | 'reset-password' | 'sign-up'): { url: string; token: string } {
  const match = new RegExp(`(https?://\\S+/${kind}/([A-Za-z0-9_-]+))`).exec(message.text ?? '');
  if (!match) throw new Error(`no /${kind}/ link in: ${message.text}`);
  return { url: match[1], token: match[2] };
}

/** Waits until the mail queue has nothing left to try now: everything queued was delivered or given up. */
export async function waitForQueueEmpty(knex: Knex, timeoutMs = 15_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const row = (await knex('mail_queue').where({ status: 'queued' }).count({ n: '*' }).first()) as { n: number | string };
    if (Number(row.n) === 0) return;
    if (Date.now() > deadline) throw new Error(`${row.n} message(s) still queued`);
    await new Promise((r) => setTimeout(r, 100));
  }
}
