/**
 * The Redis names the studio and its workers share, under the studio's prefix (`cw:<database>`). One definition, so
 * the coordinator, the workers and the internal endpoints cannot drift apart.
 */
export const TASK_QUEUE = 'tasks';

export const computeKeys = (prefix: string) => ({
  /** Set of the ids of workers that announced themselves (members whose heartbeat key expired are gone). */
  workers: `${prefix}:workers`,
  /** Hash of one worker: host, threads, pid, startedAt, lastBeat, task (JSON or empty); expires without heartbeats. */
  worker: (workerId: string) => `${prefix}:worker:${workerId}`,
  /** Set of the SHA-256 digests of the originals a task may read. */
  grant: (taskId: string) => `${prefix}:grant:${taskId}`,
  /** The result of a finished task (wire form), read once by the coordinator. */
  result: (taskId: string) => `${prefix}:result:${taskId}`,
  /** A worker session (the hash of its secret) → the worker's id. */
  session: (secretHash: string) => `${prefix}:worker-session:${secretHash}`,
  /** List: shard operations for one worker's shard host (data-parallel training), taken in order. */
  shardInbox: (workerId: string) => `${prefix}:shard-inbox:${workerId}`,
  /** List: the shard hosts' answers to one training session's coordinator. */
  shardReplies: (sessionId: string) => `${prefix}:shard-replies:${sessionId}`,
  /** The training sample of a session (wire form): what a shard host needs to build its shards. */
  shardSession: (sessionId: string) => `${prefix}:shard-session:${sessionId}`,
  /** Set of the sessions whose shards a worker holds: it may read their originals (see grant). */
  workerSessions: (workerId: string) => `${prefix}:worker-sessions:${workerId}`,
  /** Pub/sub: task progress reports and cancellations (of tasks and of shard sessions, by id). */
  progressChannel: `${prefix}:task-progress`,
  cancelChannel: `${prefix}:task-cancel`,
});

export type ComputeKeys = ReturnType<typeof computeKeys>;

/** How often a worker writes its heartbeat; its entry expires after three missed beats. */
export const WORKER_HEARTBEAT_MS = 2_000;
export const WORKER_TTL_MS = 3 * WORKER_HEARTBEAT_MS;
