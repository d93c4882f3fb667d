/** At most `count` tasks at once; the rest wait their turn in arrival order. */
export function createSlots(count: number) {
  let free = Math.max(1, count);
  const waiting: (() => void)[] = [];
  return {
    async run<T>(work: () => Promise<T>): Promise<T> {
      if (free > 0) free -= 1;
      else await new Promise<void>((resolve) => waiting.push(resolve));
      try {
        return await work();
      } finally {
        // The slot passes straight to the next in line, so a newcomer cannot take it in between.
        const next = waiting.shift();
        if (next) next();
        else free += 1;
      }
    },
  };
}

export type Slots = ReturnType<typeof createSlots>;
