import { describe, expect, it } from 'vitest';
import { createJobEventBus, type JobEvent } from '../../../server/jobs/events';

const progress = (runId: number | null, fraction: number): JobEvent => ({
  type: 'progress',
  jobId: 1,
  runId,
  teamId: 1,
  kind: 'train',
  progress: { phase: 'training', fraction },
});

describe('job event bus', () => {
  it("delivers a run's events only to that run's subscribers, in order", () => {
    const bus = createJobEventBus();
    const seen: number[] = [];
    const elsewhere: number[] = [];
    bus.subscribeRun(7, (e) => e.type === 'progress' && seen.push(e.progress.fraction));
    bus.subscribeRun(8, (e) => e.type === 'progress' && elsewhere.push(e.progress.fraction));
    bus.publish(progress(7, 0.1));
    bus.publish(progress(7, 0.2));
    bus.publish(progress(null, 0.3));
    expect(seen).toEqual([0.1, 0.2]);
    expect(elsewhere).toEqual([]);
  });

  it('stops delivering after unsubscribe and counts open subscriptions', () => {
    const bus = createJobEventBus();
    let calls = 0;
    const off = bus.subscribeRun(7, () => (calls += 1));
    const offAll = bus.subscribeAll(() => undefined);
    bus.onCancelRequest(() => undefined);
    expect(bus.listenerCount()).toBe(2);
    off();
    offAll();
    bus.publish(progress(7, 0.5));
    expect(calls).toBe(0);
    expect(bus.listenerCount()).toBe(0);
  });

  it('passes cancel requests to the runner by job id', () => {
    const bus = createJobEventBus();
    const ids: number[] = [];
    bus.onCancelRequest((id) => ids.push(id));
    bus.requestCancel(42);
    expect(ids).toEqual([42]);
  });
});
