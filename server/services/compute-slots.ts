import { AppError } from '../errors';

/** Gives a slot back; calling it more than once gives it back once. */
export type ReleaseSlot = () => void;

/**
 * At most `maxRunning` computations at once and `maxQueued` more waiting for a slot, in arrival order; a request
 * beyond both is refused with 429 at once rather than left to pile up. A waiter whose signal aborts leaves the line.
 */
export function createComputeSlots(options: { maxRunning: number; maxQueued: number; what: string }) {
  let running = 0;
  const waiting: { grant: () => void; leave: () => void }[] = [];

  const slot = (): ReleaseSlot => {
    let held = true;
    return () => {
      if (!held) return;
      held = false;
      running -= 1;
      const next = waiting.shift();
      if (next) {
        running += 1;
        next.grant();
      }
    };
  };

  return {
    /** Resolves with a slot when one is free; rejects with 429 when the line is full, with the signal's reason when it aborts. */
    acquire(signal: AbortSignal): Promise<ReleaseSlot> {
      if (signal.aborted) return Promise.reject(signal.reason);
      if (running < options.maxRunning) {
        running += 1;
        return Promise.resolve(slot());
      }
      if (waiting.length >= options.maxQueued) {
        const details = { running, maxRunning: options.maxRunning, waiting: waiting.length, maxQueued: options.maxQueued };
        return Promise.reject(new AppError('rate_limited', 429, `Too many ${options.what} are being computed; try again in a moment`, details));
      }
      return new Promise((resolve, reject) => {
        const entry = {
          grant: () => {
            signal.removeEventListener('abort', entry.leave);
            resolve(slot());
          },
          leave: () => {
            const at = waiting.indexOf(entry);
            if (at >= 0) waiting.splice(at, 1);
            reject(signal.reason);
          },
        };
        signal.addEventListener('abort', entry.leave, { once: true });
        waiting.push(entry);
      });
    },
    /** Computations running and waiting now. */
    load(): { running: number; waiting: number } {
      return { running, waiting: waiting.length };
    },
  };
}

export type ComputeSlots = ReturnType<typeof createComputeSlots>;
