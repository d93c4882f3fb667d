import { createHash, randomBytes, randomUUID, timingSafeEqual } from 'node:crypto';
import { Redis } from 'ioredis';
import { computeKeys } from './keys';
import type { CurrentTask } from './worker';

/** A worker as the workers page shows it. */
export interface WorkerEntry {
  workerId: string;
  host: string;
  threads: number;
  startedAt: string;
  lastBeat: string;
  task: CurrentTask | null;
}

export interface WorkerRegistry {
  /**
   * Admits a worker that presents the current worker token: a new id and a session secret for the internal
   * endpoints (only its SHA-256 is kept). Null when the token is not the current one.
   */
  register(presentedToken: string, info: { host: string; threads: number }): Promise<{ workerId: string; session: string } | null>;
  /** The worker a session secret belongs to, or null (unknown, or revoked by a token rotation). */
  authenticate(session: string): Promise<string | null>;
  /**
   * Whether the worker may read this original now: only while it holds a task, or the shards of a training session,
   * whose grant names the digest.
   */
  mayRead(workerId: string, sha256: string): Promise<boolean>;
  /** Workers whose heartbeat is current, oldest first. */
  list(): Promise<WorkerEntry[]>;
  /** Ends every worker session (after the token changed): workers must register again with the new token. */
  revokeSessions(): Promise<number>;
  close(): Promise<void>;
}

/** A worker session is refreshed on use and lapses after this long unused (the worker then registers again). */
const SESSION_TTL_MS = 24 * 3600_000;

const sha256 = (text: string) => createHash('sha256').update(text).digest('hex');

/** Compares secrets in time independent of where they differ (their hashes have equal length). */
function sameSecret(a: string, b: string): boolean {
  return timingSafeEqual(Buffer.from(sha256(a), 'hex'), Buffer.from(sha256(b), 'hex'));
}

/**
 * The studio's view of its compute workers, in Redis beside the job queues: who joined (sessions), who is alive
 * (heartbeats), and what each may read (the grant of the task it holds). The token is read at every registration,
 * so replacing it refuses the old one at once.
 */
export function createWorkerRegistry(options: { redisUrl: string; prefix: string; currentToken: () => string }): WorkerRegistry {
  const keys = computeKeys(options.prefix);
  let redis: Redis | undefined;
  const client = () => {
    if (!redis) {
      redis = new Redis(options.redisUrl, { maxRetriesPerRequest: 3 });
      redis.on('error', () => undefined);
    }
    return redis;
  };

  return {
    async register(presentedToken, info) {
      if (!sameSecret(presentedToken, options.currentToken())) return null;
      const workerId = `${info.host.replace(/[^A-Za-z0-9._-]/g, '-').slice(0, 40)}-${randomUUID().slice(0, 8)}`;
      const session = randomBytes(32).toString('base64url');
      await client().set(keys.session(sha256(session)), workerId, 'PX', SESSION_TTL_MS);
      return { workerId, session };
    },
    async authenticate(session) {
      const key = keys.session(sha256(session));
      const workerId = await client().get(key);
      if (workerId) await client().pexpire(key, SESSION_TTL_MS);
      return workerId;
    },
    async mayRead(workerId, digest) {
      const r = client();
      const task = await r.hget(keys.worker(workerId), 'task');
      // The task in hand, and the training sessions whose shards the worker holds (data-parallel training).
      const grants = [...(task ? [(JSON.parse(task) as CurrentTask).taskId] : []), ...(await r.smembers(keys.workerSessions(workerId)))];
      for (const id of grants) if ((await r.sismember(keys.grant(id), digest)) === 1) return true;
      return false;
    },
    async list() {
      const r = client();
      const ids = await r.smembers(keys.workers);
      const out: WorkerEntry[] = [];
      for (const id of ids) {
        const h = await r.hgetall(keys.worker(id));
        if (!h.host) {
          // Its heartbeat expired: the worker stopped or lost the network.
          await r.srem(keys.workers, id);
          continue;
        }
        out.push({ workerId: id, host: h.host, threads: Number(h.threads), startedAt: h.startedAt, lastBeat: h.lastBeat, task: h.task ? (JSON.parse(h.task) as CurrentTask) : null });
      }
      return out.sort((a, b) => a.startedAt.localeCompare(b.startedAt) || a.workerId.localeCompare(b.workerId));
    },
    async revokeSessions() {
      const r = client();
      let removed = 0;
      let cursor = '0';
      do {
        const [next, found] = await r.scan(cursor, 'MATCH', keys.session('*'), 'COUNT', 500);
        cursor = next;
        if (found.length > 0) removed += await r.del(...found);
      } while (cursor !== '0');
      return removed;
    },
    async close() {
      redis?.disconnect();
      redis = undefined;
    },
  };
}
