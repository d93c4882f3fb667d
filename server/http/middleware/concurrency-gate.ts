/**
 * Counts what is in progress, in all and per user, and refuses more than the limits allow. acquire() answers
 * at once (no queue): a caller over the limit is told to come back, and nothing of its request is read.
 */
export interface ConcurrencyGate {
  /** A release function (safe to call more than once), or null when the user or the whole server is at its limit. */
  acquire(userId: number): (() => void) | null;
}

export function createConcurrencyGate(limits: { total?: number; perUser: number }): ConcurrencyGate {
  const total = limits.total ?? Number.POSITIVE_INFINITY;
  const perUser = new Map<number, number>();
  let all = 0;
  return {
    acquire(userId) {
      const mine = perUser.get(userId) ?? 0;
      if (mine >= limits.perUser || all >= total) return null;
      perUser.set(userId, mine + 1);
      all += 1;
      let released = false;
      return () => {
        if (released) return;
        released = true;
        all -= 1;
        const left = (perUser.get(userId) ?? 1) - 1;
        if (left > 0) perUser.set(userId, left);
        else perUser.delete(userId);
      };
    },
  };
}
