import { describe, expect, it } from 'vitest';
import { createSlots } from '../../../server/services/uploads/slots';

/** A task that runs until the test lets it finish. */
function gatedTask(log: string[], name: string) {
  let finish!: () => void;
  const gate = new Promise<void>((resolve) => (finish = resolve));
  return {
    run: async () => {
      log.push(`start ${name}`);
      await gate;
      log.push(`end ${name}`);
      return name;
    },
    finish: () => finish(),
  };
}

const settle = () => new Promise((r) => setImmediate(r));

describe('slots', () => {
  it('runs at most the given number of tasks at once and starts the waiting ones in arrival order', async () => {
    const slots = createSlots(2);
    const log: string[] = [];
    const tasks = ['a', 'b', 'c', 'd'].map((n) => gatedTask(log, n));
    const results = tasks.map((t) => slots.run(t.run));
    await settle();
    expect(log).toEqual(['start a', 'start b']);
    tasks[1].finish();
    await settle();
    expect(log).toEqual(['start a', 'start b', 'end b', 'start c']);
    tasks[0].finish();
    tasks[2].finish();
    tasks[3].finish();
    expect(await Promise.all(results)).toEqual(['a', 'b', 'c', 'd']);
    expect(log.filter((l) => l.startsWith('start'))).toEqual(['start a', 'start b', 'start c', 'start d']);
  });

  it('frees the slot of a task that fails', async () => {
    const slots = createSlots(1);
    await expect(slots.run(() => Promise.reject(new Error('broken file')))).rejects.toThrow('broken file');
    expect(await slots.run(async () => 'next')).toBe('next');
  });
});
