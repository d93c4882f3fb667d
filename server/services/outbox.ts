import type { OutboxMessage } from '../contracts';
import type { Database } from '../db';

/**
 * A team's Outbox: the mail its own actions caused (invitations, job notices) and how delivery went, read from
 * the mail queue by team. Account mail (sign-up links, resets) has no team and never appears; captured mail as a
 * whole is for the operator alone (`npm run mail`).
 */
export function createOutboxService(deps: { db: Database }) {
  return {
    async listForTeam(teamId: number): Promise<OutboxMessage[]> {
      const rows = await deps.db.repos.mailQueue.listForTeam(teamId);
      return rows.map((m) => ({
        id: m.id,
        kind: m.kind,
        to: m.recipient,
        subject: m.subject,
        text: m.text,
        status: m.status,
        attempts: m.attempts,
        lastError: m.lastError,
        createdAt: m.createdAt,
        sentAt: m.sentAt,
      }));
    },
  };
}

export type OutboxService = ReturnType<typeof createOutboxService>;
