import type { Logger } from '../config';

/**
 * Error codes that say the database could not be reached or went away, as mysql2 and Node report them; an error
 * with one of these says nothing about the job, only that the write must wait. (Node's and mysql2's error codes;
 * ER_SERVER_SHUTDOWN is MariaDB's 1053, ER_CON_COUNT_ERROR its 1040.)
 */
const UNREACHABLE = new Set([
  'ECONNREFUSED',
  'ECONNRESET',
  'EPIPE',
  'ETIMEDOUT',
  'EHOSTUNREACH',
  'PROTOCOL_CONNECTION_LOST',
  'PROTOCOL_SEQUENCE_TIMEOUT',
  'ER_SERVER_SHUTDOWN',
  'ER_CON_COUNT_ERROR',
]);

export function isDatabaseUnreachable(err: unknown): boolean {
  if (!(err instanceof Error)) return false;
  const code = (err as { code?: unknown }).code;
  if (typeof code === 'string' && UNREACHABLE.has(code)) return true;
  // Knex gives up waiting for a pooled connection when none can be made.
  if (err.name === 'KnexTimeoutError') return true;
  return (err as { fatal?: unknown }).fatal === true;
}

export interface RetryOptions {
  logger: Logger;
  /** Aborting stops the waiting (the process is stopping); the last error is thrown then. */
  signal?: AbortSignal;
  /** Waits between tries: doubling from the first to the last, which then repeats. */
  firstDelayMs?: number;
  maxDelayMs?: number;
}

/**
 * Runs `write` until it succeeds or fails for a reason other than an unreachable database: a job that ends while
 * MariaDB is down keeps its results in memory and commits them when the database is back, instead of failing.
 */
export async function untilDatabaseAnswers<T>(what: string, write: () => Promise<T>, options: RetryOptions): Promise<T> {
  let delay = options.firstDelayMs ?? 250;
  const maxDelay = options.maxDelayMs ?? 5_000;
  for (let attempt = 1; ; attempt += 1) {
    try {
      return await write();
    } catch (err) {
      if (!isDatabaseUnreachable(err) || options.signal?.aborted) throw err;
      if (attempt === 1 || attempt % 10 === 0) options.logger.warn({ err, attempt, what }, 'database unreachable; retrying the write');
      await new Promise((resolve) => setTimeout(resolve, delay).unref());
      delay = Math.min(maxDelay, delay * 2);
    }
  }
}
