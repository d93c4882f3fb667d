import type { Knex } from 'knex';

/** A pool or a transaction: repositories run the same SQL on either. */
export type Executor = Knex | Knex.Transaction;

export function insertedId(result: unknown): number {
  const id = Array.isArray(result) ? result[0] : result;
  const n = Number(typeof id === 'object' && id !== null && 'id' in id ? (id as { id: unknown }).id : id);
  if (!Number.isSafeInteger(n) || n <= 0) throw new Error(`insert returned no id: ${JSON.stringify(result)}`);
  return n;
}
