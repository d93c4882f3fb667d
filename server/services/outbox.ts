import type { OutboxMessage } from '../contracts';
import type { Database } from '../db';

export function createOutboxService(deps: { db: Database }) {
  return {
    listForTeam(teamId: number): Promise<OutboxMessage[]> {
      return deps.db.repos.outbox.listForTeam(teamId);
    },
  };
}

export type OutboxService = ReturnType<typeof createOutboxService>;
