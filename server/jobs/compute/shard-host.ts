import { Redis } from 'ioredis';
import type { Logger } from '../../config';
import { SearchCrew, ShardState, TreeShardState, distancesToNewest, shardLayout, type CellMember, type ShardLayout } from '../../engine';
import { computeKeys } from './keys';
import { borrowSample } from './sample-cache';
import { fromWire, toWire } from './tasks';
import { sampleKey, type ShardMessage, type ShardReply, type ShardSession, type ShardValue, type TrainingSample } from './shard-wire';

export interface ShardHostOptions {
  redisUrl: string;
  prefix: string;
  workerId: string;
  logger: Logger;
  /** Draws a run's training vectors here (the same sample the coordinator drew). */
  loadSample(sample: TrainingSample, signal: AbortSignal): Promise<Float32Array>;
}

export interface ShardHost {
  start(): Promise<void>;
  stop(): Promise<void>;
}

interface HostedSession {
  session: ShardSession;
  layout: ShardLayout;
  vectors: Float32Array;
  release(): void;
  shards: Map<number, ShardState>;
  /** The sequence number of each shard's last pass here. */
  passOf: Map<number, number>;
  controller: AbortController;
  lastUse: number;
  /** Tree growth: each shard's tree here, the splits applied to it, and the sequence number of its last node pass. */
  trees: Map<number, { state: TreeShardState; commits: number; passSeq?: number }>;
  /** A k-means++ seeding in progress: its codewords so far (K × d; `known` of them) and the newest one's distances to the earlier. */
  seed?: { k: number; codewords: Float32Array; known: number; fromNewest: Float64Array };
}

/** A session nobody has asked anything for this long is given up (its coordinator is gone). */
const SESSION_IDLE_MS = 10 * 60_000;

/**
 * The shards a worker holds for data-parallel training: it takes shard operations from its inbox in order, draws
 * the session's sample once (from the same originals and seed as the coordinator), keeps each shard's search and
 * bounds between passes, and answers shard by shard. One crew of threads serves every session, so a host never
 * waits for another host or for a coordinator.
 */
export function createShardHost(options: ShardHostOptions): ShardHost {
  const keys = computeKeys(options.prefix);
  const { logger } = options;
  const sessions = new Map<string, HostedSession>();
  let inbox: Redis | undefined;
  let redis: Redis | undefined;
  let subscriber: Redis | undefined;
  let crew: SearchCrew | undefined;
  let stopping = false;
  let loop: Promise<void> | undefined;

  function drop(sessionId: string): void {
    const hosted = sessions.get(sessionId);
    if (!hosted) return;
    sessions.delete(sessionId);
    hosted.controller.abort(new Error('the training session ended'));
    for (const state of hosted.shards.values()) state.close();
    hosted.release();
    if (sessions.size === 0) {
      crew?.close();
      crew = undefined;
    }
  }

  async function open(sessionId: string): Promise<HostedSession> {
    const existing = sessions.get(sessionId);
    if (existing) return existing;
    const text = await redis!.get(keys.shardSession(sessionId));
    if (!text) throw new Error('the training session is gone');
    const session = fromWire<ShardSession>(text);
    const controller = new AbortController();
    const borrowed = borrowSample(sampleKey(session.sample), () => options.loadSample(session.sample, controller.signal));
    let vectors: Float32Array;
    try {
      vectors = await borrowed.vectors;
    } catch (err) {
      borrowed.release();
      throw err;
    }
    const n = vectors.length / session.sample.dimension;
    if (n !== session.n) {
      borrowed.release();
      throw new Error(`this worker drew ${n} training vectors, the coordinator ${session.n}`);
    }
    crew ??= await SearchCrew.open(undefined, controller.signal);
    const hosted: HostedSession = {
      session, layout: shardLayout(n), vectors, release: borrowed.release, shards: new Map(), passOf: new Map(), trees: new Map(), controller, lastUse: Date.now(),
    };
    sessions.set(sessionId, hosted);
    logger.info({ sessionId, jobId: session.jobId, vectors: n, shards: hosted.layout.count }, 'hosting shards');
    return hosted;
  }

  async function shardOf(hosted: HostedSession, s: number, prime: ShardMessage['prime']): Promise<ShardState> {
    const { session, layout, vectors, controller } = hosted;
    let state = hosted.shards.get(s);
    if (!state) {
      state = await ShardState.open(vectors, session.sample.dimension, layout, s, crew!, session.maxK, controller.signal);
      hosted.shards.set(s, state);
    }
    // Taken over mid-iteration: repeat the last pass so the partition is the one the coordinator saw.
    if (prime && hosted.passOf.get(s) !== prime.seq) {
      await state.assign(prime.codewords, prime.k, controller.signal);
      hosted.passOf.set(s, prime.seq);
    }
    return state;
  }

  /** Codeword c of the session's seeding is vector `index`: recorded once, with its distances to the earlier ones. */
  function learnCodeword(hosted: HostedSession, c: number, index: number): void {
    const seed = hosted.seed!;
    const d = hosted.session.sample.dimension;
    if (c < seed.known) return;
    if (c > seed.known) throw new Error(`seed step ${c} came before codeword ${seed.known}`);
    seed.codewords.set(hosted.vectors.subarray(index * d, (index + 1) * d), c * d);
    distancesToNewest(seed.codewords, c, d, seed.fromNewest);
    seed.known = c + 1;
  }

  /**
   * A k-means++ step (ShardOp 'seed'): the pick first, when this host holds the chosen shard (answered at once, so
   * the coordinator can send the index to the other hosts meanwhile), then codeword c applied to every listed shard.
   */
  async function seedStep(hosted: HostedSession, message: ShardMessage, reply: (r: ShardReply) => Promise<void>): Promise<void> {
    const op = message.op as Extract<ShardMessage['op'], { op: 'seed' }>;
    const d = hosted.session.sample.dimension;
    if (!hosted.seed || hosted.seed.k !== op.k || op.c === 0) {
      hosted.seed = { k: op.k, codewords: new Float32Array(op.k * d), known: 0, fromNewest: new Float64Array(op.k) };
      logger.info({ sessionId: message.sessionId, jobId: hosted.session.jobId, k: op.k, shards: message.shards }, 'seeding shards');
    }
    (message.seedPrime ?? []).forEach((index, c) => learnCodeword(hosted, c, index));
    const seed = hosted.seed;
    let index = op.index ?? -1;
    if (op.pick) {
      const chosen = (await shardOf(hosted, op.pick.shard, undefined)).seeding(op.k);
      await chosen.advance(seed.codewords, op.c);
      index = chosen.pick(op.pick.residual);
      await reply({ seq: message.seq, shard: op.pick.shard, pick: index });
    }
    learnCodeword(hosted, op.c, index);
    // The shards step side by side on this host's threads; every one is awaited, even after a failure.
    const totals = await Promise.allSettled(message.shards.map(async (shard) => {
      const state = await shardOf(hosted, shard, undefined);
      return state.seeding(op.k).advance(seed.codewords, op.c + 1, seed.fromNewest);
    }));
    for (const [i, shard] of message.shards.entries()) {
      const total = totals[i];
      if (total.status === 'rejected') throw total.reason;
      await reply({ seq: message.seq, shard, value: total.value });
    }
  }

  /**
   * Shard s's tree as the coordinator's splits left it: a fresh one (the root) at first; rebuilt from every split
   * when the message primes it and this copy has applied another number of them (taken over, or lost and given
   * back); its node's last pass repeated when primed with one this copy has not made.
   */
  function treeOf(hosted: HostedSession, s: number, message: ShardMessage): TreeShardState {
    const d = hosted.session.sample.dimension;
    let tree = hosted.trees.get(s);
    const prime = message.treePrime;
    if (!tree || (prime && tree.commits !== prime.commits.length)) {
      tree = { state: TreeShardState.of(hosted.vectors, d, hosted.layout, s), commits: 0 };
      for (const c of prime?.commits ?? []) tree.state.commit(c.node, c.codewords, c.left, c.right);
      tree.commits = prime?.commits.length ?? 0;
      hosted.trees.set(s, tree);
    }
    const pass = prime?.pass;
    if (pass && tree.passSeq !== pass.seq && (message.op.op === 'treeMembers' || message.op.op === 'treeMove')) {
      tree.state.assign(pass.node, pass.codewords, pass.k);
      tree.passSeq = pass.seq;
    }
    return tree.state;
  }

  /** A tree op for one shard (engine structures/tree-shards.ts). */
  function treeValue(hosted: HostedSession, shard: number, message: ShardMessage): ShardValue {
    const state = treeOf(hosted, shard, message);
    const { op } = message;
    if (op.op === 'treeAssign') {
      hosted.trees.get(shard)!.passSeq = message.seq;
      return state.assign(op.node, op.codewords, op.k);
    }
    if (op.op === 'treeMembers') {
      const ask = op.asks.find((a) => a.shard === shard)!;
      return state.members(op.node, op.cell, ask.skip, ask.take);
    }
    if (op.op === 'treeMove') return state.move(op.node, op.moves, op.k);
    if (op.op !== 'treeCommit') throw new Error(`${op.op} is not a tree op`);
    const rows = state.commit(op.split.node, op.split.codewords, op.split.left, op.split.right);
    hosted.trees.get(shard)!.commits++;
    return rows;
  }

  async function answer(message: ShardMessage): Promise<void> {
    const { op } = message;
    if (op.op === 'close') {
      drop(message.sessionId);
      return;
    }
    const reply = (r: ShardReply) => redis!.rpush(keys.shardReplies(message.sessionId), toWire(r)).then(() => undefined);
    let hosted: HostedSession;
    try {
      hosted = await open(message.sessionId);
    } catch (err) {
      if (stopping) return;
      for (const shard of message.shards) await reply({ seq: message.seq, shard, error: (err as Error).message });
      return;
    }
    hosted.lastUse = Date.now();
    const signal = hosted.controller.signal;
    if (op.op === 'seed') {
      try {
        await seedStep(hosted, message, reply);
      } catch (err) {
        if (signal.aborted || stopping) return;
        for (const shard of message.shards) await reply({ seq: message.seq, shard, error: (err as Error).message });
      }
      return;
    }
    // Passes come after the seeding: its codewords are no longer needed here.
    if (op.op === 'assign') hosted.seed = undefined;
    for (const shard of message.shards) {
      try {
        if (op.op.startsWith('tree')) {
          await reply({ seq: message.seq, shard, value: treeValue(hosted, shard, message) });
          continue;
        }
        const state = await shardOf(hosted, shard, op.op === 'assign' ? undefined : message.prime);
        let value: ShardValue;
        if (op.op === 'assign') {
          value = await state.assign(op.codewords, op.k, signal);
          hosted.passOf.set(shard, message.seq);
        }
        else if (op.op === 'move') value = await state.move(op.moves, op.k, signal);
        else if (op.op === 'splitSums') value = state.splitSums(op.request);
        else if (op.op === 'ecvq') value = state.ecvq(op.request);
        else if (op.op === 'members') {
          const ask = op.asks.find((a) => a.shard === shard)!;
          value = state.members(op.cell, ask.skip, ask.take) satisfies CellMember[];
        } else throw new Error(`${op.op} is not a shard op`);
        await reply({ seq: message.seq, shard, value });
      } catch (err) {
        // Cancelled or stopping: the coordinator knows, or will hand the shard to another host.
        if (signal.aborted || stopping) return;
        await reply({ seq: message.seq, shard, error: (err as Error).message });
      }
    }
  }

  async function run(): Promise<void> {
    while (!stopping) {
      let popped: [string, string] | null;
      try {
        popped = await inbox!.blpop(keys.shardInbox(options.workerId), 1);
      } catch (err) {
        if (stopping) return;
        logger.warn({ err }, 'shard inbox unreachable; trying again');
        await new Promise((resolve) => setTimeout(resolve, 1_000));
        continue;
      }
      const now = Date.now();
      for (const [id, hosted] of sessions) if (now - hosted.lastUse > SESSION_IDLE_MS) drop(id);
      if (!popped) continue;
      try {
        await answer(fromWire<ShardMessage>(popped[1]));
      } catch (err) {
        logger.warn({ err }, 'shard operation failed');
      }
    }
  }

  return {
    async start() {
      stopping = false;
      inbox = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
      redis = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
      subscriber = new Redis(options.redisUrl, { maxRetriesPerRequest: null });
      for (const c of [inbox, redis, subscriber]) c.on('error', (err) => logger.warn({ err }, 'shard host connection error'));
      subscriber.on('message', (_channel: string, id: string) => {
        if (!sessions.has(id)) return;
        logger.info({ sessionId: id, jobId: sessions.get(id)!.session.jobId }, 'training session cancelled by the studio');
        drop(id);
      });
      await subscriber.subscribe(keys.cancelChannel);
      loop = run();
    },
    async stop() {
      stopping = true;
      for (const id of [...sessions.keys()]) drop(id);
      inbox?.disconnect();
      await loop?.catch(() => undefined);
      redis?.disconnect();
      subscriber?.disconnect();
      inbox = redis = subscriber = undefined;
    },
  };
}
