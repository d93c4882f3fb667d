import { rateLimited } from '../errors';

export interface LoginThrottleOptions {
  /** Consecutive failures an account may have before any delay. */
  freeAttempts: number;
  /** Delay after the first failure beyond the free ones; it doubles with each further failure… */
  baseMs: number;
  /** …up to this cap, so nobody can keep an account shut for longer than this per attempt. */
  maxMs: number;
  now: () => Date;
  /** Accounts tracked at once; the oldest are forgotten first, which bounds memory whatever is sprayed. */
  maxEntries?: number;
}

interface Entry {
  failures: number;
  /** Epoch ms before which an attempt for this account is refused without checking the password. */
  blockedUntil: number;
  lastFailure: number;
}

/**
 * Per-account backoff for password checks, keyed by the e-mail typed (whether or not it has an account, so the
 * answers never tell which addresses exist). Attempts during the delay are refused with 429 and Retry-After and
 * neither checked nor counted, so hammering does not lengthen it; a success clears the account's record.
 * One server process per database (see DEVELOPERS.md), so the state lives in memory.
 */
export function createLoginThrottle(options: LoginThrottleOptions) {
  const maxEntries = options.maxEntries ?? 50_000;
  // A Map iterates in insertion order; re-inserting on every failure keeps the least recent first.
  const entries = new Map<string, Entry>();
  // Forget an account's failures after a quiet spell as long as the longest delay plus an hour.
  const forgetAfterMs = options.maxMs + 60 * 60 * 1000;
  const keyOf = (email: string) => email.trim().toLowerCase();

  function live(key: string, at: number): Entry | undefined {
    const entry = entries.get(key);
    if (entry && at - entry.lastFailure > forgetAfterMs) {
      entries.delete(key);
      return undefined;
    }
    return entry;
  }

  return {
    /** Throws 429 (with the seconds to wait) while the account is in its delay. */
    check(email: string): void {
      const at = options.now().getTime();
      const entry = live(keyOf(email), at);
      if (entry && entry.blockedUntil > at) {
        const seconds = Math.max(1, Math.ceil((entry.blockedUntil - at) / 1000));
        throw rateLimited(`Too many failed sign-ins for this account; try again in ${seconds} s`, seconds);
      }
    },
    failed(email: string): void {
      const key = keyOf(email);
      const at = options.now().getTime();
      const entry = live(key, at) ?? { failures: 0, blockedUntil: 0, lastFailure: at };
      entry.failures += 1;
      entry.lastFailure = at;
      const over = entry.failures - options.freeAttempts;
      if (over > 0) entry.blockedUntil = at + Math.min(options.maxMs, options.baseMs * 2 ** Math.min(over - 1, 30));
      entries.delete(key);
      entries.set(key, entry);
      while (entries.size > maxEntries) entries.delete(entries.keys().next().value as string);
    },
    succeeded(email: string): void {
      entries.delete(keyOf(email));
    },
  };
}

export type LoginThrottle = ReturnType<typeof createLoginThrottle>;
