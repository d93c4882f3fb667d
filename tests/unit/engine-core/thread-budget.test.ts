import { describe, expect, it } from 'vitest';
import os from 'node:os';
import { ThreadBudget, threadBudget } from '../../../server/engine/training/index';

describe('ThreadBudget', () => {
  it('is sized to the available cores by default', () => {
    expect(threadBudget.total).toBe(os.availableParallelism());
  });

  it('grants what is free and never more than the total', async () => {
    const budget = new ThreadBudget(4);
    const a = await budget.acquire(3);
    expect(a.threads).toBe(3);
    const b = await budget.acquire(8);
    expect(b.threads).toBe(1);
    expect(budget.available).toBe(0);
    a.release();
    a.release(); // idempotent
    expect(budget.available).toBe(3);
    b.release();
    expect(budget.available).toBe(4);
  });

  it('makes a request wait until a thread is released, first come first served', async () => {
    const budget = new ThreadBudget(2);
    const first = await budget.acquire(2);
    const order: string[] = [];
    const w1 = budget.acquire(1).then((l) => (order.push('w1'), l));
    const w2 = budget.acquire(2).then((l) => (order.push('w2'), l));
    await new Promise((r) => setTimeout(r, 5));
    expect(order).toEqual([]);
    first.release();
    const [l1, l2] = await Promise.all([w1, w2]);
    expect(order).toEqual(['w1', 'w2']);
    expect(l1.threads + l2.threads).toBe(2);
  });

  it('drops a waiting request when its signal aborts', async () => {
    const budget = new ThreadBudget(1);
    const held = await budget.acquire(1);
    const controller = new AbortController();
    const waiting = budget.acquire(1, controller.signal);
    controller.abort();
    await expect(waiting).rejects.toMatchObject({ name: 'AbortError' });
    held.release();
    expect(budget.available).toBe(1);
  });

  it('can be resized and rejects a size below one', async () => {
    const budget = new ThreadBudget(1);
    budget.configure(3);
    expect((await budget.acquire(5)).threads).toBe(3);
    expect(() => budget.configure(0)).toThrow(RangeError);
  });
});
