import { randomUUID } from 'node:crypto';
import { Redis } from 'ioredis';
import type { Logger } from '../../config';
import {
  shardLayout, type CellMember, type EcvqShardPass, type EcvqShards, type SeedChoice, type SeedStep, type ShardAssignment, type ShardExecutor, type ShardSplitSums, type ShardSums, type TreeShards,
} from '../../engine';
import { computeKeys } from './keys';
import { borrowSample } from './sample-cache';
import { fromWire, toWire } from './tasks';
import { sampleKey, type ShardMessage, type ShardOp, type ShardReply, type ShardSession, type ShardValue, type TrainingSample, type TreeCommit } from './shard-wire';

export interface ShardSpreadOptions {
  redisUrl: string;
  prefix: string;
  logger: Logger;
}

/** How often a coordinator waiting for shards checks that their hosts are alive. */
const LIVENESS_CHECK_MS = 1_000;
/** The session's keys outlive a coordinator that died by this much. */
const SESSION_TTL_MS = 24 * 3600_000;

/** Ids of the workers whose heartbeat is current, in a fixed order. */
async function liveWorkers(redis: Redis, keys: ReturnType<typeof computeKeys>): Promise<string[]> {
  const ids = (await redis.smembers(keys.workers)).sort();
  const alive: string[] = [];
  for (const id of ids) if ((await redis.exists(keys.worker(id))) === 1) alive.push(id);
  return alive;
}

export interface ShardSpread {
  /** Live workers now: spreading pays only with two or more. */
  liveWorkers(): Promise<number>;
  /**
   * A training pass's shards spread over the live workers' shard hosts (see createShardHost). `vectors` is the
   * coordinator's own draw of the sample, lent to this process's host. One session serves one training: Lloyd
   * passes, entropy-constrained passes, or a tree's growth.
   */
  open(input: { jobId: number; teamId: number; sample: TrainingSample; vectors: Float32Array; maxK: number; signal?: AbortSignal }): Promise<SpreadShards>;
  close(): void;
}

/** The shards of one session, as the Lloyd engine, entropy-constrained training and tree growth ask them. */
export type SpreadShards = ShardExecutor & EcvqShards & TreeShards;

/**
 * The coordinator's side of data-parallel training. Shards go to the live workers in contiguous groups; each
 * operation is one message per host and one reply per shard (a k-means++ step also one pick from the chosen host). A host whose heartbeat lapses loses its shards to the
 * live host with the fewest, which repeats the last pass before answering (ShardMessage.prime); replies are matched
 * by sequence number, so a late answer from a host given up for dead is ignored. Results never depend on which host
 * answered (core/shard-fold.ts).
 */
export function createShardSpread(options: ShardSpreadOptions): ShardSpread {
  const keys = computeKeys(options.prefix);
  const { logger } = options;
  let redis: Redis | undefined;
  const client = () => {
    if (!redis) {
      redis = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
      redis.on('error', (err) => logger.warn({ err }, 'shard coordinator connection error'));
    }
    return redis;
  };

  return {
    close() {
      redis?.disconnect();
      redis = undefined;
    },
    async liveWorkers() {
      return (await liveWorkers(client(), keys)).length;
    },
    async open(input) {
      const r = client();
      const n = input.vectors.length / input.sample.dimension;
      const layout = shardLayout(n);
      const sessionId = `shards-${randomUUID()}`;
      const session: ShardSession = { sessionId, jobId: input.jobId, teamId: input.teamId, sample: input.sample, n, maxK: input.maxK };
      const digests = [...new Set(input.sample.images.map((i) => i.sha256))];
      const lent = borrowSample(sampleKey(input.sample), async () => input.vectors);
      const replies = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
      replies.on('error', (err) => logger.warn({ err }, 'shard replies connection error'));
      const owner: string[] = [];
      let seq = 0;
      let last: { seq: number; k: number; codewords: Float32Array } | undefined;

      const grant = async (workerId: string) => {
        await r.multi().sadd(keys.workerSessions(workerId), sessionId).pexpire(keys.workerSessions(workerId), SESSION_TTL_MS).exec();
      };
      let workers = await liveWorkers(r, keys);
      if (workers.length === 0) throw new Error('no worker is alive to compute the shards');
      await r.multi()
        .set(keys.shardSession(sessionId), toWire(session), 'PX', SESSION_TTL_MS)
        .sadd(keys.grant(sessionId), ...(digests.length > 0 ? digests : ['-']))
        .pexpire(keys.grant(sessionId), SESSION_TTL_MS)
        .exec();
      for (let s = 0; s < layout.count; s++) owner.push(workers[Math.floor((s * workers.length) / layout.count)]);
      for (const w of new Set(owner)) await grant(w);

      // Tree growth: every split committed so far, the last node pass, and the shards whose host is known to hold
      // the tree as it stands (a shard given to another host is primed with the splits until it answers).
      const treeLog: TreeCommit[] = [];
      let treePass: { seq: number; node: number; k: number; codewords: Float32Array } | undefined;
      const treeSynced = new Set<number>(Array.from({ length: layout.count }, (_, s) => s));

      const send = async (shards: number[], op: ShardOp, m: number) => {
        const byHost = new Map<string, number[]>();
        for (const s of shards) byHost.set(owner[s], [...(byHost.get(owner[s]) ?? []), s]);
        for (const [host, list] of byHost) {
          const message: ShardMessage = { sessionId, seq: m, shards: list, prime: op.op === 'assign' ? undefined : last, op };
          if (op.op.startsWith('tree') && list.some((s) => !treeSynced.has(s))) message.treePrime = { commits: treeLog, pass: treePass };
          await r.rpush(keys.shardInbox(host), toWire(message));
        }
      };

      /** Gives the shards of hosts that stopped beating to live ones; returns the shards moved. */
      const reassign = async (pending: Set<number>, op: ShardOp['op']): Promise<number[]> => {
        const hosts = new Set([...pending].map((s) => owner[s]));
        const dead: string[] = [];
        for (const h of hosts) if ((await r.exists(keys.worker(h))) === 0) dead.push(h);
        if (dead.length === 0) return [];
        workers = await liveWorkers(r, keys);
        if (workers.length === 0) {
          logger.warn({ sessionId, jobId: input.jobId }, 'no worker is alive for the shards; waiting for one');
          return [];
        }
        const moved: number[] = [];
        for (let s = 0; s < owner.length; s++) {
          if (!dead.includes(owner[s])) continue;
          treeSynced.delete(s);
          const load = (w: string) => owner.filter((o) => o === w).length;
          const to = workers.reduce((best, w) => (load(w) < load(best) ? w : best), workers[0]);
          owner[s] = to;
          await grant(to);
          moved.push(s);
        }
        logger.warn({ sessionId, jobId: input.jobId, op, dead, moved }, 'shard hosts stopped; their shards go to live workers');
        return moved;
      };

      /** Sends `op` for `shards` and waits for every shard's answer, resending what a lost host held. */
      async function request(shards: number[], op: ShardOp, signal?: AbortSignal): Promise<Map<number, ShardValue>> {
        const m = ++seq;
        const pending = new Set(shards);
        const out = new Map<number, ShardValue>();
        await send(shards, op, m);
        let checked = Date.now();
        while (pending.size > 0) {
          signal?.throwIfAborted();
          const popped = await replies.blpop(keys.shardReplies(sessionId), 1);
          if (popped) {
            const reply = fromWire<ShardReply>(popped[1]);
            if (reply.seq !== m || !pending.has(reply.shard)) continue;
            if (reply.error !== undefined) throw new Error(`shard ${reply.shard}: ${reply.error}`);
            pending.delete(reply.shard);
            if (op.op.startsWith('tree')) treeSynced.add(reply.shard);
            out.set(reply.shard, reply.value!);
          }
          if (Date.now() - checked >= LIVENESS_CHECK_MS) {
            checked = Date.now();
            const moved = (await reassign(pending, op.op)).filter((s) => pending.has(s));
            if (moved.length > 0) await send(moved, op, m);
          }
        }
        return out;
      }

      /** The seeding's codewords so far (indices in the whole set), and how many of them each host has been given. */
      const seedIndices: number[] = [];
      const hostKnows = new Map<string, number>();

      /**
       * One k-means++ step: at most one message per host. With a pick, only the chosen shard's host is asked at
       * first; it answers with the pick at once and goes on to its own shards while the others are sent the index.
       * A host that may lack earlier codewords (it took over a shard) gets their indices to apply first.
       */
      async function seedStep(k: number, c: number, choice: SeedChoice, signal?: AbortSignal): Promise<SeedStep> {
        const m = ++seq;
        const pending = new Set(all);
        const sent = new Set<number>();
        const totals = new Array<number>(layout.count).fill(0);
        let index = 'index' in choice ? choice.index : -1;
        const dispatch = async (shards: number[]) => {
          const byHost = new Map<string, number[]>();
          for (const s of shards) byHost.set(owner[s], [...(byHost.get(owner[s]) ?? []), s]);
          for (const [host, list] of byHost) {
            const pick = index < 0 && 'shard' in choice && list.includes(choice.shard) ? { shard: choice.shard, residual: choice.residual } : undefined;
            if (index < 0 && !pick) continue;
            const op: ShardOp = { op: 'seed', k, c, index: pick ? undefined : index, pick };
            const known = hostKnows.get(host) ?? 0;
            const message: ShardMessage = { sessionId, seq: m, shards: list, op, seedPrime: known < c ? seedIndices.slice(0, c) : undefined };
            await r.rpush(keys.shardInbox(host), toWire(message));
            hostKnows.set(host, c + 1);
            for (const s of list) sent.add(s);
          }
        };
        await dispatch('shard' in choice ? all.filter((s) => owner[s] === owner[choice.shard]) : all);
        let checked = Date.now();
        while (pending.size > 0) {
          signal?.throwIfAborted();
          const popped = await replies.blpop(keys.shardReplies(sessionId), 1);
          if (popped) {
            const reply = fromWire<ShardReply>(popped[1]);
            if (reply.seq !== m) continue;
            if (reply.error !== undefined) throw new Error(`shard ${reply.shard}: ${reply.error}`);
            if (reply.pick !== undefined) {
              if (index < 0) {
                index = reply.pick;
                await dispatch(all.filter((s) => !sent.has(s)));
              }
              continue;
            }
            if (!pending.has(reply.shard)) continue;
            pending.delete(reply.shard);
            totals[reply.shard] = reply.value as number;
          }
          if (Date.now() - checked >= LIVENESS_CHECK_MS) {
            checked = Date.now();
            const moved = (await reassign(pending, 'seed')).filter((s) => pending.has(s));
            for (const s of moved) {
              sent.delete(s);
              hostKnows.delete(owner[s]);
            }
            if (moved.length > 0) await dispatch(moved);
          }
        }
        seedIndices[c] = index;
        return { index, totals };
      }

      const onAbort = () => void r.publish(keys.cancelChannel, sessionId).catch(() => undefined);
      input.signal?.addEventListener('abort', onAbort, { once: true });
      const all = Array.from({ length: layout.count }, (_, s) => s);

      return {
        count: layout.count,
        seed: seedStep,
        async assign(codewords, k, signal) {
          const cw = codewords.slice(0, k * input.sample.dimension);
          const values = await request(all, { op: 'assign', k, codewords: cw }, signal);
          last = { seq, k, codewords: cw };
          return all.map((s) => values.get(s) as ShardAssignment);
        },
        async members(cell, asks, signal) {
          const values = await request(asks.map((a) => a.shard), { op: 'members', cell, asks: [...asks] }, signal);
          return asks.map((a) => values.get(a.shard) as CellMember[]);
        },
        async move(moves, k, signal) {
          const touched = all.filter((s) => moves.some((mv) => mv.index >= s * layout.size && mv.index < Math.min(n, (s + 1) * layout.size)));
          const values = await request(touched, { op: 'move', k, moves: [...moves] }, signal);
          return new Map(touched.map((s) => [s, values.get(s) as ShardSums]));
        },
        async splitSums(split, signal) {
          const values = await request(all, { op: 'splitSums', request: split }, signal);
          return all.map((s) => values.get(s) as ShardSplitSums);
        },
        async ecvqPass(pass, signal) {
          const values = await request(all, { op: 'ecvq', request: pass }, signal);
          return all.map((s) => values.get(s) as EcvqShardPass);
        },
        async nodeAssign(node, codewords, k, signal) {
          const cw = codewords.slice(0, k * input.sample.dimension);
          const values = await request(all, { op: 'treeAssign', node, k, codewords: cw }, signal);
          treePass = { seq, node, k, codewords: cw };
          return all.map((s) => values.get(s) as ShardAssignment);
        },
        async nodeMembers(node, cell, asks, signal) {
          const values = await request(asks.map((a) => a.shard), { op: 'treeMembers', node, cell, asks: [...asks] }, signal);
          return asks.map((a) => values.get(a.shard) as CellMember[]);
        },
        async nodeMove(node, moves, k, signal) {
          const touched = all.filter((s) => moves.some((mv) => mv.index >= s * layout.size && mv.index < Math.min(n, (s + 1) * layout.size)));
          const values = await request(touched, { op: 'treeMove', node, k, moves: [...moves] }, signal);
          return new Map(touched.map((s) => [s, values.get(s) as ShardSums]));
        },
        async commitSplit(node, codewords, left, right, signal) {
          const split: TreeCommit = { node, codewords: codewords.slice(), left, right };
          const values = await request(all, { op: 'treeCommit', split }, signal);
          treeLog.push(split);
          treePass = undefined;
          return all.map((s) => values.get(s) as [Float32Array, Float32Array]);
        },
        async close() {
          input.signal?.removeEventListener('abort', onAbort);
          const m = ++seq;
          for (const host of new Set(owner)) {
            await r.rpush(keys.shardInbox(host), toWire({ sessionId, seq: m, shards: [], op: { op: 'close' } } satisfies ShardMessage)).catch(() => undefined);
            await r.srem(keys.workerSessions(host), sessionId).catch(() => undefined);
          }
          await r.del(keys.shardSession(sessionId), keys.grant(sessionId), keys.shardReplies(sessionId)).catch(() => undefined);
          replies.disconnect();
          lent.release();
        },
      };
    },
  };
}
