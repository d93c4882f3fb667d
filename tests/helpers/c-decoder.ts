// Compiling and running the exported C decoder in tests: the flags, the sanitizer environment, the build of one
// codebook's bundle in a folder, and the reader of the Netpbm files decode_file writes. gcc is the system's
// (scripts/ensure-gcc.sh installs Debian's when missing).
import { execFileSync, spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { firmwareBundle, type Codebook, type ResidualWidth } from '../../server/engine';

export const STRICT = ['-std=c99', '-Wall', '-Wextra', '-Werror', '-O2'];
export const SANITIZED = ['-std=c99', '-Wall', '-Wextra', '-Werror', '-O1', '-g', '-fno-omit-frame-pointer', '-fsanitize=address,undefined', '-fno-sanitize-recover=all'];
/** Sanitizer reports exit with their own statuses, so they cannot pass for decode_file's own 1. */
export const SANITIZER_ENV = { ...process.env, ASAN_OPTIONS: 'exitcode=97:abort_on_error=0', UBSAN_OPTIONS: 'exitcode=98:halt_on_error=1:print_stacktrace=1' };

/** Linear congruential generator (Numerical Recipes constants): seeded, so every run tests the same values. */
export function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

export function gcc(args: string[], cwd: string): void {
  execFileSync('gcc', args, { cwd, stdio: ['ignore', 'ignore', 'pipe'] });
}

/** Fails the calling file at once, with the reason, when gcc is missing. */
export function requireGcc(): void {
  execFileSync('gcc', ['--version'], { stdio: 'ignore' });
}

/**
 * Writes the codebook's firmware bundle into `dir` (which exists) and compiles decode_file twice: strict at -O2 and
 * with the address and undefined-behaviour sanitizers. Returns the two binaries and the bundle's fixed-point table.
 */
export function buildDecoder(book: Codebook, dir: string, residual?: ResidualWidth): { strict: string; sanitized: string; table: ReturnType<typeof firmwareBundle>['table'] } {
  const bundle = firmwareBundle(book, { residual });
  for (const f of bundle.files) writeFileSync(join(dir, f.name), f.text);
  const sources = bundle.files.filter((f) => f.name.endsWith('.c')).map((f) => f.name);
  gcc([...STRICT, '-o', 'decode_file', ...sources], dir);
  gcc([...SANITIZED, '-o', 'decode_file_san', ...sources], dir);
  return { strict: join(dir, 'decode_file'), sanitized: join(dir, 'decode_file_san'), table: bundle.table };
}

/** Reads a binary PGM (P5) or PPM (P6) with maxval 255, as decode_file writes it. */
export function readNetpbm(path: string): { channels: number; width: number; height: number; pixels: Uint8Array } {
  const data = readFileSync(path);
  const m = /^P([56])\n(\d+) (\d+)\n255\n/.exec(data.subarray(0, 64).toString('latin1'));
  if (!m) throw new Error(`${path} is not a binary PGM/PPM`);
  return { channels: m[1] === '6' ? 3 : 1, width: Number(m[2]), height: Number(m[3]), pixels: new Uint8Array(data.subarray(m[0].length)) };
}

/** Runs decode_file on one container; the sanitized binary under SANITIZER_ENV. */
export function runDecoder(binary: string, input: string, output: string, sanitized: boolean) {
  return spawnSync(binary, [input, output], { encoding: 'utf8', env: sanitized ? SANITIZER_ENV : process.env });
}
