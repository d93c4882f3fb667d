import { iso, parseJson } from '../rows';
import { insertedId, type Executor } from './executor';

export interface CapturedMessage {
  messageId: string | null;
  from: string;
  to: string[];
  subject: string;
  text: string;
  html: string | null;
  raw: Buffer;
}

/** A message as the local capture server stored it; read by the operator (npm run mail) and tests, never by a team. */
export interface StoredMessage {
  id: number;
  from: string;
  to: string[];
  subject: string;
  text: string;
  html: string | null;
  receivedAt: string;
}

interface OutboxRow {
  id: number;
  envelope_from: string;
  envelope_to: unknown;
  subject: string;
  text: string;
  html: string | null;
  received_at: Date;
}

const toMessage = (r: OutboxRow): StoredMessage => ({
  id: r.id,
  from: r.envelope_from,
  to: parseJson<string[]>(r.envelope_to) ?? [],
  subject: r.subject,
  text: r.text,
  html: r.html,
  receivedAt: iso(r.received_at),
});

const listColumns = ['m.id', 'm.envelope_from', 'm.envelope_to', 'm.subject', 'm.text', 'm.html', 'm.received_at'];

export function outboxRepository(db: Executor) {
  return {
    /** Stores one message and its recipients; the caller supplies a transaction so both land or neither. */
    async insert(message: CapturedMessage): Promise<number> {
      const to = [...new Set(message.to.map((a) => a.toLowerCase()))];
      const id = insertedId(
        await db('outbox_messages').insert({
          message_id: message.messageId,
          envelope_from: message.from.toLowerCase(),
          envelope_to: JSON.stringify(to),
          subject: message.subject,
          text: message.text,
          html: message.html,
          raw: message.raw,
        }),
      );
      if (to.length > 0) await db('outbox_recipients').insert(to.map((address) => ({ message_id: id, address })));
      return id;
    },
    /** The newest captured messages, optionally only those for one address; newest first. */
    async listRecent(options: { to?: string; limit?: number } = {}): Promise<StoredMessage[]> {
      const q = db('outbox_messages as m');
      if (options.to) q.whereExists(db('outbox_recipients as r').select(db.raw('1')).whereRaw('r.message_id = m.id').andWhere('r.address', options.to.toLowerCase()));
      const rows = (await q.orderBy('m.id', 'desc').limit(options.limit ?? 10).select(listColumns)) as OutboxRow[];
      return rows.map(toMessage);
    },
    /** Every message for one address, newest first; used by tests and the demo tools. */
    async listForAddress(address: string, limit = 50): Promise<StoredMessage[]> {
      const rows = (await db('outbox_messages as m')
        .join('outbox_recipients as r', 'r.message_id', 'm.id')
        .where('r.address', address.toLowerCase())
        .orderBy('m.id', 'desc')
        .limit(limit)
        .select(listColumns)) as OutboxRow[];
      return rows.map(toMessage);
    },
  };
}

export type OutboxRepository = ReturnType<typeof outboxRepository>;
