/**
 * Training samples this process holds, by sample key: the coordinator's own, lent to its process's shard host, and
 * those a shard host drew. A sample is dropped once nothing has used it for IDLE_MS (a run's passes reuse it).
 */
const IDLE_MS = 10 * 60_000;

const entries = new Map<string, { vectors: Promise<Float32Array>; users: number; timer?: NodeJS.Timeout }>();

/** The sample under `key`, drawn by `load` the first time; release() when done with it. */
export function borrowSample(key: string, load: () => Promise<Float32Array>): { vectors: Promise<Float32Array>; release(): void } {
  let entry = entries.get(key);
  if (!entry) {
    const vectors = load();
    entry = { vectors, users: 0 };
    entries.set(key, entry);
    // A failed draw is not kept: the next borrower tries again.
    vectors.catch(() => entries.delete(key));
  }
  const held = entry;
  clearTimeout(held.timer);
  held.users++;
  let released = false;
  return {
    vectors: held.vectors,
    release() {
      if (released) return;
      released = true;
      held.users--;
      if (held.users > 0) return;
      held.timer = setTimeout(() => {
        if (held.users === 0 && entries.get(key) === held) entries.delete(key);
      }, IDLE_MS);
      held.timer.unref();
    },
  };
}
