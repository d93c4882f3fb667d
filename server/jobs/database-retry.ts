import type { Logger } from '../config';
import { isConnectionError } from '../errors';

/** InnoDB chose this transaction as a deadlock victim, or it waited too long for a lock: running it again is the cure. */
const LOCK_CODES = new Set(['ER_LOCK_DEADLOCK', 'ER_LOCK_WAIT_TIMEOUT']);

function hasLockCode(err: unknown): boolean {
  for (let e = err as { code?: unknown; cause?: unknown } | null | undefined, depth = 0; e && depth < 5; e = e.cause as typeof e, depth += 1) {
    if (typeof e.code === 'string' && LOCK_CODES.has(e.code)) return true;
  }
  return false;
}

/**
 * True when an error says nothing about the job, only that the write must be tried again: the database could not be
 * reached or went away (connection errors, followed through `cause`), or it rolled the transaction back to break a
 * deadlock between processes.
 */
export function isTransientDatabaseError(err: unknown): boolean {
  return isConnectionError(err) || hasLockCode(err);
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
 * Runs `write` until it succeeds or fails for a reason other than a transient database error: a job that ends while
 * MariaDB is down keeps its results in memory and commits them when the database is back, instead of failing.
 * `write` must be one transaction (all or nothing), so trying it again is safe.
 */
export async function untilDatabaseAnswers<T>(what: string, write: () => Promise<T>, options: RetryOptions): Promise<T> {
  let delay = options.firstDelayMs ?? 250;
  const maxDelay = options.maxDelayMs ?? 5_000;
  for (let attempt = 1; ; attempt += 1) {
    try {
      return await write();
    } catch (err) {
      if (!isTransientDatabaseError(err) || options.signal?.aborted) throw err;
      if (attempt === 1 || attempt % 10 === 0) options.logger.warn({ err, attempt, what }, 'database unreachable or busy; retrying the write');
      await new Promise((resolve) => setTimeout(resolve, delay).unref());
      delay = Math.min(maxDelay, delay * 2);
    }
  }
}
