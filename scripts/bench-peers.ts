// The peers of `npm run bench` (not a test): scikit-learn and faiss from Debian's packages, run by scripts/bench-peers.py
// under Debian's python3. scikit-learn's Lloyd runs on OpenBLAS, whose kernel family the environment may pin
// (OPENBLAS_CORETYPE, OPENBLAS_L2_SIZE) to one below this CPU's own; the bench therefore times it with the variables
// as given (when set), with them unset, and with the CPU's own family forced — in those commands alone, never in this
// process — and compares against the fastest of the last two, naming the kernel threadpoolctl reports for each.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { writeNpy } from '../server/engine/io/npy';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const script = path.join(root, 'scripts', 'bench-peers.py');
const PYTHON = '/usr/bin/python3'; // Debian's, where Debian's python3-sklearn is installed
const BLAS_VARIABLES = ['OPENBLAS_CORETYPE', 'OPENBLAS_L2_SIZE'] as const;

export interface Kernel { blas: string | null; version?: string; family: string | null; threads?: number }
export interface BlasSetting { label: string; env: NodeJS.ProcessEnv; counts: boolean }
export interface LloydFigure { wall: number; cpu?: number; iterations: number; mse: number; kernel: Kernel; setting: string; version?: string }
export interface LadderFigure { total: number; sizes: Array<{ size: number; seconds: number; iterations: number; mse: number }>; kernel: Kernel; setting: string }

/** Debian's python3 with scikit-learn, installed by scripts/ensure-bench-python.sh when missing; undefined if that fails. */
export function benchPython(): string | undefined {
  const r = spawnSync('bash', [path.join(root, 'scripts', 'ensure-bench-python.sh')], { stdio: ['ignore', 'ignore', 'inherit'] });
  if (r.status !== 0) return undefined;
  return spawnSync(PYTHON, ['-c', 'import sklearn, threadpoolctl'], { stdio: 'ignore' }).status === 0 ? PYTHON : undefined;
}

export function faissImports(python: string): boolean {
  return spawnSync(python, ['-c', 'import faiss'], { stdio: 'ignore' }).status === 0;
}

const withoutBlasVariables = (): NodeJS.ProcessEnv => {
  const env = { ...process.env };
  for (const v of BLAS_VARIABLES) delete env[v];
  return env;
};

function familyUnder(python: string, env: NodeJS.ProcessEnv): string | null {
  const r = spawnSync(python, ['-c', 'import numpy, sklearn.cluster\nfrom threadpoolctl import threadpool_info\nprint(next((i.get("architecture") or "") for i in threadpool_info() if i.get("internal_api") == "openblas"))'], {
    env, encoding: 'utf8',
  });
  return r.status === 0 && r.stdout.trim() ? r.stdout.trim() : null;
}

/**
 * The BLAS settings to time: as given (only when the environment sets either variable; reported, not compared
 * against), unset (OpenBLAS detects the CPU), and the detected family forced by name.
 */
export function blasSettings(python: string): BlasSetting[] {
  const settings: BlasSetting[] = [];
  const given = BLAS_VARIABLES.filter((v) => process.env[v] !== undefined);
  if (given.length > 0) {
    settings.push({ label: `as given (${given.map((v) => `${v}=${process.env[v]}`).join(', ')})`, env: process.env, counts: false });
  }
  const unset = withoutBlasVariables();
  settings.push({ label: 'variables unset', env: unset, counts: true });
  const own = familyUnder(python, unset);
  if (own) settings.push({ label: `OPENBLAS_CORETYPE=${own.toUpperCase()} forced`, env: { ...unset, OPENBLAS_CORETYPE: own.toUpperCase() }, counts: true });
  return settings;
}

function runPeer(python: string, env: NodeJS.ProcessEnv, args: string[]): Record<string, unknown> {
  const r = spawnSync(python, [script, ...args], { env, encoding: 'utf8', maxBuffer: 1 << 24 });
  if (r.status !== 0) throw new Error(`peer run ${args[0]} failed: ${r.stderr.trim().split('\n').pop()}`);
  return JSON.parse(r.stdout.trim().split('\n').pop()!) as Record<string, unknown>;
}

/** Vectors and codewords as .npy files in a temporary folder, removed after `use`. */
export function withNpy<T>(vectors: Float32Array, d: number, codewords: Float32Array | undefined, use: (x: string, c: string) => T): T {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'cw-bench-peer-'));
  try {
    const x = path.join(dir, 'x.npy');
    const c = path.join(dir, 'c.npy');
    writeFileSync(x, writeNpy(vectors, vectors.length / d, d));
    if (codewords) writeFileSync(c, writeNpy(codewords, codewords.length / d, d));
    return use(x, c);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** scikit-learn's Lloyd from the given codewords under every setting; `best` is the fastest of the settings that count. */
export function sklearnLloyd(python: string, x: string, c: string, iterations: number): { runs: LloydFigure[]; best: LloydFigure } {
  const runs = blasSettings(python).map((s) => ({ ...(runPeer(python, s.env, ['lloyd', x, c, String(iterations)]) as unknown as LloydFigure), setting: s.label, counts: s.counts }));
  const counted = runs.filter((r) => r.counts);
  const best = counted.reduce((a, b) => (b.wall < a.wall ? b : a));
  return { runs, best };
}

export function faissLloyd(python: string, x: string, c: string, iterations: number): LloydFigure {
  return { ...(runPeer(python, withoutBlasVariables(), ['faiss', x, c, String(iterations)]) as unknown as LloydFigure), setting: 'faiss (flat, exact)' };
}

/** scikit-learn's k-means++ (n_init = 1) for every size 2^1..2^bitsMax, under the given setting. */
export function sklearnLadder(python: string, setting: BlasSetting, x: string, bitsMax: number, seed: number): LadderFigure {
  return { ...(runPeer(python, setting.env, ['ladder', x, String(bitsMax), String(seed)]) as unknown as LadderFigure), setting: setting.label };
}

export const kernelName = (k: Kernel) => (k.blas === 'openblas' ? `OpenBLAS ${k.version ?? ''} ${k.family ?? '?'} kernels, ${k.threads ?? '?'} threads`.replace('  ', ' ') : String(k.blas));
