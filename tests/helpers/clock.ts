/** A clock a test moves by hand: injected as the composition's `now`, it makes time-based rules deterministic. */
export function manualClock(start = new Date()) {
  let at = start.getTime();
  return {
    now: () => new Date(at),
    advance(ms: number) {
      at += ms;
    },
  };
}
