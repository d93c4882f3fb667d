import type { Knex } from 'knex';
import { wrapKnex } from '../../server/db';
import type { OutboxMessage } from '../../server/contracts';

/**
 * Waits until the fake SMTP server has stored a message for `to` that matches; messages arrive
 * asynchronously (the password reset e-mail is sent after the 202).
 */
export async function waitForMail(
  knex: Knex,
  to: string,
  options: { subject?: RegExp; afterId?: number; timeoutMs?: number } = {},
): Promise<OutboxMessage> {
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

export async function mailFor(knex: Knex, to: string): Promise<OutboxMessage[]> {
  return wrapKnex(knex).repos.outbox.listForAddress(to);
}

/** The one-time token in a `${PUBLIC_URL}/<kind>/<token>` link of a message's text. */
export function linkToken(message: OutboxMessage, kind: 'invite' | 'reset-password'): { url: string; token: string } {
  const match = new RegExp(`(https?://\\S+/${kind}/([A-Za-z0-9_-]+))`).exec(message.text);
  if (!match) throw new Error(`no /${kind}/ link in: ${message.text}`);
  return { url: match[1], token: match[2] };
}
