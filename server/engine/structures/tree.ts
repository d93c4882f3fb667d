// Tree-structured VQ: a binary tree grown by splitting, each node's children trained by 2-means (core's Lloyd
// iteration on the node's vectors), balanced to depth b or greedy-grown and pruned by the generalized BFOS algorithm.
// The model, its assumptions and costs are described in README.md beside this file.
import { accumulateCentroids } from '../core/accumulate-centroids';
import { abortError, EngineError, throwIfAborted } from '../core/errors';
import { exactDistance } from '../core/exact-distance';
import { runLloyd } from '../core/lloyd';
import { createRng } from '../core/rng';
import type { TreeShards } from '../core/types';
import { checkInteger, checkNumber, checkVectors, countDistinctUpTo } from '../core/validate';
import { assignSync } from '../training/index';
import { RUN_DEFAULTS, SEED } from '../vocabulary';
import { nodeShards, openLocalTreeShards, twoDistinct } from './tree-shards';
import { descendTree, treeSearchPlan } from './tree-search';
import { DEFAULT_TREE_SPLIT_DELTA, TREE_MAX_BALANCED_DEPTH, TREE_MAX_DEPTH, TREE_MAX_LEAVES } from './limits';
import type { TreeStructure } from './types';

/**
 * How the tree grows: every node split down to depth b; or the best split first until it has `leaves` leaves
 * (default TREE_MAX_LEAVES) or its mean path length on the training vectors reaches `rate` bits, whichever comes first,
 * no path longer than `maxDepth` (default TREE_MAX_DEPTH).
 */
export type TreeGrowth =
  | { kind: 'balanced'; depth: number }
  | { kind: 'greedy'; leaves?: number; rate?: number; maxDepth?: number };

export interface TreeOptions {
  growth: TreeGrowth;
  /**
   * Prune the grown tree by the generalized BFOS algorithm to the largest subtree of its distortion–rate lower hull
   * whose rate (mean path length on the training vectors, bits per block) is at most `rate`.
   */
  prune?: { rate: number };
  /** Default RUN_DEFAULTS.seed; decides every node's starting perturbation. */
  seed?: number;
  /** Default DEFAULT_TREE_SPLIT_DELTA. */
  splitDelta?: number;
  /** Each node's 2-means stops when (D_prev − D)/D < epsilon; default RUN_DEFAULTS.epsilon. */
  epsilon?: number;
  /** Centroid updates per node at most; default RUN_DEFAULTS.maxIterations. */
  maxIterations?: number;
  /** Checked between nodes and between a node's iterations; rejects with an AbortError. */
  signal?: AbortSignal;
  onProgress?: (p: { leaves: number; distortion: number }) => void;
  /**
   * Opens the training set's shards somewhere else (the job engine's workers); by default every shard is computed in
   * this process. Either way the tree is the same bits: every node's 2-means folds the shards' partials in shard order.
   */
  openShards?: (set: { n: number; d: number; signal?: AbortSignal }) => Promise<TreeShards>;
}

/** One split of the growth: the tree after it. */
export interface TreeGrowthStep {
  leaves: number;
  /** Mean path length on the training vectors, bits per block. */
  rate: number;
  /** Tree-search MSE per component on the training vectors. */
  distortion: number;
}

/** One step of the BFOS pruning sequence: the tree after pruning (step 0 is the grown tree). */
export interface TreePruneStep extends TreeGrowthStep {
  /** Distortion saved per bit of rate of the subtree pruned at this step (MSE per component per bit per block); null at step 0. */
  lambda: number | null;
}

export interface TreeResult {
  /** nodes × d, row-major, nodes in breadth-first order (node 0 the root). */
  codewords: Float32Array;
  structure: TreeStructure;
  /** nodes: training vectors that reach each node. */
  usage: Uint32Array;
  leaves: number;
  /** Longest path, bits. */
  depth: number;
  /** Mean path length on the training vectors, bits per block. */
  rate: number;
  /** MSE per component of tree search on the training vectors. */
  treeDistortion: number;
  /** MSE per component of a full search over the same leaves on the training vectors (never above treeDistortion). */
  fullSearchDistortion: number;
  growth: TreeGrowthStep[];
  /** The whole pruning sequence down to the root, when pruning was asked for. */
  pruning?: TreePruneStep[];
  /** Centroid updates summed over every node's 2-means. */
  iterations: number;
  elapsedMs: number;
}

interface Split {
  codewords: Float32Array; // 2 × d: left, right
  counts: [number, number];
  errors: [number, number];
  iterations: number;
}

interface GrowNode {
  heap: number; // 1-based heap index: root 1, children 2h and 2h + 1
  depth: number;
  codeword: Float32Array; // d
  count: number; // training vectors that reach the node (the shards know which)
  distinct: boolean; // whether they hold two distinct vectors or more
  error: number; // total squared error of the members against the codeword
  left: number; // index into the node list, or -1
  right: number;
  split?: Split | null; // computed once; null when the node cannot be split
}

const invalid = (message: string, details?: Record<string, unknown>) => new EngineError('ENGINE_INVALID_INPUT', message, details);

/**
 * Where a node's 2-means starts (2 × d: left, right): c ± δσ·u, σ = √(error / (n·d)) the node's RMS error per
 * component and u a standard normal direction scaled to length √d, drawn from the generator of (seed, heap index).
 */
export function splitStart(
  codeword: Float32Array, error: number, n: number, d: number, seed: number, heap: number, delta: number,
): Float32Array {
  const rng = createRng(seed + heap * 2 ** 31);
  const u = new Float64Array(d);
  let norm = 0;
  for (let i = 0; i < d; i++) {
    u[i] = rng.normal();
    norm += u[i] * u[i];
  }
  const sigma = Math.sqrt(error / (n * d));
  const scale = (delta * sigma * Math.sqrt(d)) / Math.sqrt(norm);
  const start = new Float32Array(2 * d);
  for (let i = 0; i < d; i++) {
    start[i] = codeword[i] + scale * u[i];
    start[d + i] = codeword[i] - scale * u[i];
  }
  return start;
}

/**
 * The 2-means of node t: core's Lloyd iteration (runLloyd) over the node's vectors in every shard from c ± δσ·u, with
 * u a random direction of length √d drawn from the node's own generator (seed and heap index), so a node's split does
 * not depend on the order the nodes are visited in. Null when the node holds fewer than two distinct vectors.
 */
async function splitNode(
  shards: TreeShards, t: number, d: number, node: GrowNode, o: Required<Omit<TreeOptions, 'growth' | 'prune' | 'signal' | 'onProgress' | 'openShards'>> & { signal?: AbortSignal },
): Promise<Split | null> {
  if (node.count < 2 || !node.distinct) return null;
  const start = splitStart(node.codeword, node.error, node.count, d, o.seed, node.heap, o.splitDelta);
  const book = await runLloyd({ d, n: node.count, shards: nodeShards(shards, t), epsilon: o.epsilon, maxIterations: o.maxIterations, signal: o.signal }, start, 2);
  // runLloyd's last pass is the nearest partition under the final codewords: the partition tree search makes, and
  // the one the shards take when the split is committed.
  return {
    codewords: book.codewords,
    counts: [book.usage[0], book.usage[1]],
    errors: [book.cellDistortion[0], book.cellDistortion[1]],
    iterations: book.iterations,
  };
}

/** Node t becomes internal: its vectors go to its two new children in every shard. */
async function childrenOf(nodes: GrowNode[], shards: TreeShards, t: number, split: Split, d: number, signal?: AbortSignal): Promise<void> {
  const parent = nodes[t];
  const at = nodes.length;
  const rows = await shards.commitSplit(t, split.codewords, at, at + 1, signal);
  for (const side of [0, 1] as const) {
    nodes.push({
      heap: parent.heap * 2 + side,
      depth: parent.depth + 1,
      codeword: split.codewords.slice(side * d, side * d + d),
      count: split.counts[side],
      distinct: twoDistinct(rows.map((r) => r[side]), d),
      error: split.errors[side],
      left: -1,
      right: -1,
    });
  }
  parent.left = at;
  parent.right = at + 1;
}

/** A split that leaves the node as it is: both children copy its codeword; ties go left, so the right one stays empty. */
function copySplit(node: GrowNode, d: number): Split {
  const codewords = new Float32Array(2 * d);
  codewords.set(node.codeword, 0);
  codewords.set(node.codeword, d);
  return { codewords, counts: [node.count, 0], errors: [node.error, 0], iterations: 0 };
}

function leavesOf(nodes: GrowNode[]): number[] {
  const out: number[] = [];
  const stack = [0];
  while (stack.length > 0) {
    const t = stack.pop()!;
    if (nodes[t].left < 0) out.push(t);
    else stack.push(nodes[t].right, nodes[t].left);
  }
  return out;
}

function measure(nodes: GrowNode[], leaves: readonly number[], n: number, d: number): TreeGrowthStep {
  let bits = 0;
  let error = 0;
  for (const t of leaves) {
    bits += nodes[t].count * nodes[t].depth;
    error += nodes[t].error;
  }
  return { leaves: leaves.length, rate: bits / n, distortion: error / (n * d) };
}

/**
 * The generalized BFOS pruning sequence of a grown tree (Chou, Lookabaugh & Gray 1989, "Optimal pruning with
 * applications to tree-structured source coding and modeling", IEEE Trans. IT 35(2)), with distortion the total
 * squared error and rate the total path length over the training vectors: at every step the internal node whose
 * subtree saves the least distortion per bit, ΔD(t)/ΔR(t), becomes a leaf. Both functionals are linear over the
 * leaves, so each step lands on the lower convex hull of the (rate, distortion) pairs of all pruned subtrees and the
 * slopes never decrease. Returns the pruned nodes in order (applied one after another they give every step) and the
 * sequence of (rate, distortion) points, step 0 the grown tree.
 */
function bfosSequence(nodes: readonly GrowNode[], n: number, d: number): { pruned: number[]; steps: TreePruneStep[] } {
  const m = nodes.length;
  const parent = new Int32Array(m).fill(-1);
  const deltaD = new Float64Array(m); // distortion the subtree saves over the node as a leaf
  const deltaR = new Float64Array(m); // path bits the subtree adds over the node as a leaf
  const internal = new Uint8Array(m);
  // Children come after their parent in the list, so one pass backwards visits every subtree before its root.
  for (let t = 0; t < m; t++) {
    if (nodes[t].left >= 0) {
      parent[nodes[t].left] = t;
      parent[nodes[t].right] = t;
      internal[t] = 1;
    }
  }
  const leafError = new Float64Array(m);
  const leafBits = new Float64Array(m);
  for (let t = m - 1; t >= 0; t--) {
    const node = nodes[t];
    if (node.left < 0) {
      leafError[t] = node.error;
      leafBits[t] = node.count * node.depth;
    } else {
      leafError[t] = leafError[node.left] + leafError[node.right];
      leafBits[t] = leafBits[node.left] + leafBits[node.right];
      deltaD[t] = node.error - leafError[t];
      deltaR[t] = leafBits[t] - node.count * node.depth;
    }
  }
  const first = measure(nodes as GrowNode[], leavesOf(nodes as GrowNode[]), n, d);
  const steps: TreePruneStep[] = [{ ...first, lambda: null }];
  const pruned: number[] = [];
  let error = first.distortion * n * d;
  let bits = first.rate * n;
  let leaves = first.leaves;
  // Subtrees no vector reaches cost nothing to prune (ΔR = 0): slope 0, pruned first.
  const slope = (t: number) => (deltaR[t] > 0 ? deltaD[t] / deltaR[t] : 0);
  for (;;) {
    let best = -1;
    let bestSlope = Infinity;
    for (let t = 0; t < m; t++) {
      if (!internal[t]) continue;
      const s = slope(t);
      if (s < bestSlope) {
        bestSlope = s;
        best = t;
      }
    }
    if (best < 0) break;
    const dD = deltaD[best];
    const dR = deltaR[best];
    // The subtree's internal nodes leave the tree; the current leaves below it (grown leaves or nodes pruned
    // earlier, whose children were never pushed) are counted as they go.
    let removedLeaves = 0;
    const stack = [nodes[best].left, nodes[best].right];
    while (stack.length > 0) {
      const t = stack.pop()!;
      if (internal[t]) {
        internal[t] = 0;
        stack.push(nodes[t].left, nodes[t].right);
      } else {
        removedLeaves++;
      }
    }
    internal[best] = 0;
    for (let a = parent[best]; a >= 0; a = parent[a]) {
      deltaD[a] -= dD;
      deltaR[a] -= dR;
    }
    error += dD;
    bits -= dR;
    leaves += 1 - removedLeaves;
    pruned.push(best);
    steps.push({ leaves, rate: bits / n, distortion: error / (n * d), lambda: dR > 0 ? dD / (d * dR) : 0 });
  }
  return { pruned, steps };
}

function options(o: TreeOptions) {
  if (o === null || typeof o !== 'object') throw invalid('options must be an object');
  const g = o.growth as TreeGrowth | undefined;
  if (!g || (g.kind !== 'balanced' && g.kind !== 'greedy')) throw invalid("growth must be { kind: 'balanced', depth } or { kind: 'greedy', leaves?, rate? }");
  if (g.kind === 'balanced') checkInteger('depth', g.depth, 0, TREE_MAX_BALANCED_DEPTH);
  else {
    if (g.leaves === undefined && g.rate === undefined) throw invalid('greedy growth needs leaves, rate or both');
    if (g.leaves !== undefined) checkInteger('leaves', g.leaves, 1, TREE_MAX_LEAVES);
    if (g.rate !== undefined) checkNumber('rate', g.rate, 0, TREE_MAX_DEPTH);
    if (g.maxDepth !== undefined) checkInteger('maxDepth', g.maxDepth, 0, TREE_MAX_DEPTH);
  }
  if (o.prune !== undefined) checkNumber('prune.rate', o.prune?.rate, 0, TREE_MAX_DEPTH);
  if (o.openShards !== undefined && typeof o.openShards !== 'function') throw invalid('openShards must be a function');
  return {
    seed: o.seed === undefined ? RUN_DEFAULTS.seed : checkInteger('seed', o.seed, SEED.min, SEED.max),
    splitDelta: o.splitDelta === undefined ? DEFAULT_TREE_SPLIT_DELTA : checkNumber('splitDelta', o.splitDelta, 0, 1, true),
    epsilon: o.epsilon === undefined ? RUN_DEFAULTS.epsilon : checkNumber('epsilon', o.epsilon, 0, 1),
    maxIterations: o.maxIterations === undefined ? RUN_DEFAULTS.maxIterations : checkInteger('maxIterations', o.maxIterations, 0, 1_000_000),
    signal: o.signal,
  };
}

/**
 * Trains a tree-structured codebook on vectors (N × d, row-major). The root is the centroid; every split trains the
 * node's two children by 2-means on the vectors that reach it. Balanced growth splits every node down to depth b
 * (a node with fewer than two distinct vectors gets two copies of its codeword, the right one never used, so the
 * index stays b bits); greedy growth (Riskin & Gray 1991) splits, among the current leaves, the one that saves the
 * most distortion per bit of mean path length, until the tree has the leaves asked for or no leaf can split.
 * Deterministic for a seed.
 */
export async function trainTree(vectors: Float32Array, d: number, opts: TreeOptions): Promise<TreeResult> {
  const n = checkVectors(vectors, d);
  const o = options(opts);
  const t0 = performance.now();
  throwIfAborted(o.signal);

  const root = new Float32Array(d);
  accumulateCentroids(vectors, d, new Uint32Array(n), root, 1);
  let rootError = 0;
  for (let v = 0; v < n; v++) rootError += exactDistance(vectors, v * d, root, 0, d);
  const nodes: GrowNode[] = [{ heap: 1, depth: 0, codeword: root, count: n, distinct: countDistinctUpTo(vectors, d, 2) >= 2, error: rootError, left: -1, right: -1 }];
  const growth: TreeGrowthStep[] = [measure(nodes, [0], n, d)];
  let iterations = 0;
  const report = (step = measure(nodes, leavesOf(nodes), n, d)) => {
    growth.push(step);
    opts.onProgress?.({ leaves: step.leaves, distortion: step.distortion });
  };
  const shards = opts.openShards ? await opts.openShards({ n, d, signal: o.signal }) : openLocalTreeShards(vectors, d);
  const split = async (t: number): Promise<Split | null> => {
    if (nodes[t].split === undefined) {
      nodes[t].split = await splitNode(shards, t, d, nodes[t], o);
      iterations += nodes[t].split?.iterations ?? 0;
    }
    return nodes[t].split ?? null;
  };

  try {
    const g = opts.growth;
    if (g.kind === 'balanced') {
      let level = [0];
      for (let depth = 0; depth < g.depth; depth++) {
        const next: number[] = [];
        for (const t of level) {
          throwIfAborted(o.signal);
          await childrenOf(nodes, shards, t, (await split(t)) ?? copySplit(nodes[t], d), d, o.signal);
          next.push(nodes[t].left, nodes[t].right);
        }
        level = next;
        report();
      }
    } else {
      const maxDepth = g.maxDepth ?? TREE_MAX_DEPTH;
      const most = g.leaves ?? TREE_MAX_LEAVES;
      // Splittable leaves by the distortion they save per bit of total path length (splitting adds one bit to every
      // vector that reaches the leaf), largest first, ties to the earlier node: a total order, so growth is
      // deterministic. Each figure comes from the node's 2-means, folded from the shards in shard order.
      const queue = new MaxQueue<{ t: number; gain: number }>((a, b) => a.gain > b.gain || (a.gain === b.gain && a.t < b.t));
      const offer = async (t: number) => {
        if (nodes[t].depth >= maxDepth) return;
        throwIfAborted(o.signal);
        const s = await split(t);
        if (s) queue.push({ t, gain: (nodes[t].error - s.errors[0] - s.errors[1]) / nodes[t].count });
      };
      await offer(0);
      let leaves = 1;
      let bits = 0;
      let error = rootError;
      while (leaves < most && (g.rate === undefined || bits / n < g.rate) && queue.size > 0) {
        const { t } = queue.pop()!;
        const s = nodes[t].split!;
        await childrenOf(nodes, shards, t, s, d, o.signal);
        leaves++;
        bits += nodes[t].count;
        error -= nodes[t].error - s.errors[0] - s.errors[1];
        report({ leaves, rate: bits / n, distortion: error / (n * d) });
        await offer(nodes[t].left);
        await offer(nodes[t].right);
      }
    }
  } catch (err) {
    if (o.signal?.aborted && !(err instanceof EngineError)) throw abortError(o.signal);
    throw err;
  } finally {
    await shards.close();
  }

  let pruning: TreePruneStep[] | undefined;
  if (opts.prune) {
    const { pruned, steps } = bfosSequence(nodes, n, d);
    pruning = steps;
    // Rate falls along the sequence: stop at the first tree within the budget (the largest on the hull).
    let take = 0;
    while (take < pruned.length && steps[take].rate > opts.prune.rate) take++;
    for (let i = 0; i < take; i++) {
      nodes[pruned[i]].left = -1;
      nodes[pruned[i]].right = -1;
    }
  }
  const out = emit(nodes, d);
  const full = assignSync(vectors, d, leafCodewords(out.codewords, out.structure, d));
  let fullError = 0;
  for (let v = 0; v < n; v++) fullError += full.distances[v];
  const final = measure(nodes, leavesOf(nodes), n, d);
  return {
    ...out,
    leaves: final.leaves,
    rate: final.rate,
    treeDistortion: final.distortion,
    fullSearchDistortion: fullError / (n * d),
    growth,
    ...(pruning ? { pruning } : {}),
    iterations,
    elapsedMs: performance.now() - t0,
  };
}

/** A binary heap whose top is the item `before` puts first. */
class MaxQueue<T> {
  private readonly items: T[] = [];
  constructor(private readonly before: (a: T, b: T) => boolean) {}
  get size(): number {
    return this.items.length;
  }
  push(item: T): void {
    const a = this.items;
    a.push(item);
    for (let i = a.length - 1; i > 0; ) {
      const p = (i - 1) >> 1;
      if (!this.before(a[i], a[p])) break;
      [a[i], a[p]] = [a[p], a[i]];
      i = p;
    }
  }
  pop(): T | undefined {
    const a = this.items;
    const top = a[0];
    const last = a.pop();
    if (a.length > 0 && last !== undefined) {
      a[0] = last;
      for (let i = 0; ; ) {
        const l = 2 * i + 1;
        const r = l + 1;
        let m = i;
        if (l < a.length && this.before(a[l], a[m])) m = l;
        if (r < a.length && this.before(a[r], a[m])) m = r;
        if (m === i) break;
        [a[i], a[m]] = [a[m], a[i]];
        i = m;
      }
    }
    return top;
  }
}

/** The reachable nodes renumbered in breadth-first order: the contract's table and children arrays. */
function emit(nodes: readonly GrowNode[], d: number): { codewords: Float32Array; structure: TreeStructure; usage: Uint32Array; depth: number } {
  const order: number[] = [0];
  for (let i = 0; i < order.length; i++) {
    const t = nodes[order[i]];
    if (t.left >= 0) order.push(t.left, t.right);
  }
  const id = new Map(order.map((t, i) => [t, i]));
  const codewords = new Float32Array(order.length * d);
  const children = new Int32Array(order.length * 2).fill(-1);
  const usage = new Uint32Array(order.length);
  let depth = 0;
  let leafDepth = -1;
  let balanced = true;
  order.forEach((t, i) => {
    const node = nodes[t];
    codewords.set(node.codeword, i * d);
    usage[i] = node.count;
    if (node.left >= 0) {
      children[2 * i] = id.get(node.left)!;
      children[2 * i + 1] = id.get(node.right)!;
    } else {
      depth = Math.max(depth, node.depth);
      if (leafDepth < 0) leafDepth = node.depth;
      else if (node.depth !== leafDepth) balanced = false;
    }
  });
  return { codewords, structure: { kind: 'tree', children, balanced }, usage, depth };
}

/**
 * Checks a tree against its table (codewords nodes × d): node 0 the root, every other node the child of exactly one
 * earlier node, each node a leaf or the parent of two, paths at most TREE_MAX_DEPTH. Returns the longest path.
 */
export function checkTree(codewords: Float32Array, structure: TreeStructure, d: number): number {
  const { children } = structure;
  if (!(children instanceof Int32Array)) throw invalid('tree children must be an Int32Array');
  const m = children.length / 2;
  if (!Number.isInteger(m) || m < 1 || codewords.length !== m * d) {
    throw invalid(`a tree of ${children.length / 2} nodes needs ${(children.length / 2) * d} codeword values`, { values: codewords.length });
  }
  const depth = new Int32Array(m).fill(-1);
  depth[0] = 0;
  let longest = 0;
  for (let t = 0; t < m; t++) {
    const [l, r] = [children[2 * t], children[2 * t + 1]];
    if (l === -1 && r === -1) continue;
    if (depth[t] < 0) throw invalid(`tree node ${t} is not reachable from the root`);
    for (const c of [l, r]) {
      if (!(c > t && c < m) || depth[c] >= 0) throw invalid(`tree node ${t} has a bad child ${c}`, { node: t, child: c });
      depth[c] = depth[t] + 1;
      longest = Math.max(longest, depth[c]);
    }
  }
  if (depth.includes(-1)) throw invalid('every tree node must be reachable from the root');
  if (longest > TREE_MAX_DEPTH) throw invalid(`tree paths are at most ${TREE_MAX_DEPTH} bits`, { depth: longest });
  return longest;
}

/** The leaves' codewords in breadth-first order (leaves × d): what a decoder needs, and the full-search table. */
export function leafCodewords(codewords: Float32Array, structure: TreeStructure, d: number): Float32Array {
  const { children } = structure;
  const leaves: number[] = [];
  for (let t = 0; t < children.length / 2; t++) if (children[2 * t] < 0) leaves.push(t);
  const out = new Float32Array(leaves.length * d);
  leaves.forEach((t, i) => out.set(codewords.subarray(t * d, t * d + d), i * d));
  return out;
}

/** A block's tree code: its path from the root as an unsigned integer, first branch most significant (0 left, 1 right). */
export interface TreeCodes {
  /** N: the path bits. */
  paths: Uint32Array;
  /** N: the path lengths, bits. */
  lengths: Uint8Array;
  /** N: the leaf reached (node index). */
  leaves: Uint32Array;
  /** N: exact squared distance of each vector to its leaf's codeword. */
  distances: Float64Array;
}

/**
 * Encodes vectors (N × d) by descent: at each internal node the nearer of its two children by exact float64 distance
 * (left on ties). For a balanced tree of depth b the path read as a b-bit number is the leaf's rank among the leaves
 * from left to right. The descent itself is tree-search.ts: one hyperplane test a level (d multiply-adds), with the
 * two distances computed only where rounding could decide otherwise, so every decision is the two distances' one.
 */
export function encodeTree(codewords: Float32Array, structure: TreeStructure, vectors: Float32Array, d: number): TreeCodes {
  checkTree(codewords, structure, d);
  checkVectors(vectors, d);
  const { paths, lengths, leaves, distances } = descendTree(treeSearchPlan(codewords, structure, d), codewords, vectors);
  return { paths, lengths, leaves, distances };
}

/** Rebuilds blocks (N × d) from their paths; a path that stops at an internal node or runs past a leaf is refused. */
export function decodeTree(
  codewords: Float32Array, structure: TreeStructure, codes: { paths: Uint32Array; lengths: Uint8Array }, d: number,
): Float32Array {
  checkTree(codewords, structure, d);
  const { children } = structure;
  const n = codes.paths.length;
  if (codes.lengths.length !== n) throw invalid('paths and lengths must have the same count');
  const out = new Float32Array(n * d);
  for (let v = 0; v < n; v++) {
    const length = codes.lengths[v];
    let t = 0;
    for (let i = length - 1; i >= 0; i--) {
      if (children[2 * t] < 0) throw invalid(`path ${v} runs past a leaf`, { block: v });
      t = children[2 * t + ((codes.paths[v] >>> i) & 1)];
    }
    if (children[2 * t] >= 0) throw invalid(`path ${v} stops at an internal node`, { block: v });
    out.set(codewords.subarray(t * d, t * d + d), v * d);
  }
  return out;
}

/**
 * Tree-search and full-search distortion (MSE per component) of a tree on vectors (N × d), e.g. held-out blocks: the
 * second searches every leaf, so the difference is what descent costs.
 */
export function treeDistortions(codewords: Float32Array, structure: TreeStructure, vectors: Float32Array, d: number): { tree: number; fullSearch: number } {
  const codes = encodeTree(codewords, structure, vectors, d);
  const full = assignSync(vectors, d, leafCodewords(codewords, structure, d));
  let tree = 0;
  let fullSearch = 0;
  for (let v = 0; v < codes.distances.length; v++) {
    tree += codes.distances[v];
    fullSearch += full.distances[v];
  }
  const scale = codes.distances.length * d;
  return { tree: tree / scale, fullSearch: fullSearch / scale };
}
