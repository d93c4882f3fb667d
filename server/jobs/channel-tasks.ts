import type { ChannelTaskRunner } from '../services/codebook-channel';
import type { TaskPool } from './pool';

const channelTask = new URL('./tasks/channel.task.ts', import.meta.url).href;

/** Channel curves and index assignment on a pool thread: both are pure CPU work of seconds. */
export function channelTaskRunner(pool: TaskPool): ChannelTaskRunner {
  return (task, signal) => pool.run(channelTask, task, { signal });
}
