// The command line fed hostile files and arguments: each is one error line on stderr, a non-zero status,
// nothing on stdout and no output file, partial or whole.
import { execFile } from 'node:child_process';
import { mkdirSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliContext } from '../../../server/cli/context';
import { main } from '../../../server/cli/main';
import { makeCodebook, toCodebookDocument } from '../../../server/engine';

const run = promisify(execFile);
const LAUNCHER = new URL('../../../scripts/cellwright.mjs', import.meta.url).pathname;
let dir: string;
const p = (...parts: string[]) => join(dir, ...parts);

async function cli(...argv: string[]) {
  let stdout = '';
  let stderr = '';
  const ctx: CliContext = { stdout: { write: (t: string) => (stdout += t) }, stderr: { write: (t: string) => (stderr += t) }, stderrIsTTY: false };
  const status = await main(argv, ctx);
  return { status, stdout, stderr };
}

function expectOneErrorLine(r: { status: number; stdout: string; stderr: string }, pattern: RegExp) {
  expect(r.status).not.toBe(0);
  expect(r.stdout).toBe('');
  const lines = r.stderr.split('\n').filter(Boolean);
  expect(lines, r.stderr).toHaveLength(1);
  expect(lines[0]).toMatch(/^cellwright: error: /);
  expect(lines[0]).toMatch(pattern);
  // No stack frames or internal paths of the program.
  expect(lines[0]).not.toMatch(/\bat .*\.ts:\d+/);
}

function codebookText(): string {
  const codewords = new Float32Array(4 * 16).map((_, i) => (i * 13) % 255);
  const cb = makeCodebook({
    size: 4,
    dimension: 16,
    patch: { width: 4, height: 4, channels: 1, color: 'luma' },
    preprocessing: { kind: 'none' },
    codewords,
    usage: Uint32Array.from([1, 1, 1, 1]),
    training: { source: 'test', vectorCount: 4, init: 'split', epsilon: 0.001, seed: 1, iterations: 1, distortion: 1, trace: [] },
  });
  return JSON.stringify(toCodebookDocument(cb));
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'cw-cli-hostile-'));
  for (const d of ['held', 'truncated', 'out']) mkdirSync(p(d));
  const png = await sharp({ create: { width: 32, height: 24, channels: 3, background: '#336699' } }).png().toBuffer();
  writeFileSync(p('held', 'a.png'), png);
  // Cut in the middle of the pixel data: the header reads, the image does not decode.
  const big = await sharp(Buffer.alloc(64 * 48 * 3, 0).map((_, i) => (i * 31) % 251), { raw: { width: 64, height: 48, channels: 3 } }).png().toBuffer();
  writeFileSync(p('truncated', 'cut.png'), big.subarray(0, Math.floor(big.length * 0.6)));
  const good = codebookText();
  writeFileSync(p('good.json'), good);
  writeFileSync(p('nan.json'), good.replace(/"codewords":\[\[[^,\]]+/, '"codewords":[[NaN'));
  writeFileSync(p('inf.json'), good.replace(/"codewords":\[\[[^,\]]+/, '"codewords":[[1e999'));
  writeFileSync(p('string.json'), good.replace(/"codewords":\[\[[^,\]]+/, '"codewords":[["12"'));
  writeFileSync(p('checksum.json'), good.replace(/"checksum":"[0-9a-f]{64}"/, `"checksum":"${'0'.repeat(64)}"`));
  writeFileSync(p('deep.json'), `${'['.repeat(100_000)}${']'.repeat(100_000)}`);
  writeFileSync(p('proto.json'), good.replace(/^\{/, '{"__proto__":{"size":1},'));
  // An .npy header (NEP 1) that promises 1000 × 16 float32 values over a body of 8 bytes.
  const header = "{'descr': '<f4', 'fortran_order': False, 'shape': (1000, 16), }";
  const padded = header + ' '.repeat(64 - ((10 + header.length + 1) % 64)) + '\n';
  const npy = Buffer.alloc(10 + padded.length + 8);
  Buffer.from([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0]).copy(npy);
  npy.writeUInt16LE(padded.length, 8);
  npy.write(padded, 10, 'latin1');
  writeFileSync(p('short.npy'), npy);
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('hostile input to the command line', () => {
  const cases: [string, () => string[], RegExp][] = [
    ['a codebook with NaN, which JSON has no word for', () => ['eval', '--codebook', p('nan.json'), '--images', p('held')], /nan\.json.*(JSON|finite|number)/i],
    ['a codebook with 1e999, which parses to Infinity', () => ['eval', '--codebook', p('inf.json'), '--images', p('held')], /finite/],
    ['a codebook with a number written as a string', () => ['eval', '--codebook', p('string.json'), '--images', p('held')], /codewords\[0\]\[0\]/],
    ['a codebook whose checksum does not match', () => ['eval', '--codebook', p('checksum.json'), '--images', p('held')], /checksum/],
    ['a JSON file nested 100 000 deep', () => ['eval', '--codebook', p('deep.json'), '--images', p('held')], /deep\.json/],
    ['a codebook with a __proto__ key', () => ['eval', '--codebook', p('proto.json'), '--images', p('held')], /proto\.json|__proto__|unrecognized|unknown/i],
    ['a truncated training image', () => ['train', '--images', p('truncated'), '--patch', '4x4', '--bits', '2', '--out', p('out', 'cb.json')], /cut\.png/],
    ['an .npy whose header promises more than the file holds', () => ['train', '--vectors', p('short.npy'), '--bits', '2', '--out', p('out', 'cb.json')], /short\.npy/],
    ['a negative patch', () => ['train', '--images', p('held'), '--patch', '-4x4', '--bits', '2', '--out', p('out', 'cb.json')], /--patch/],
    ['a NaN patch', () => ['train', '--images', p('held'), '--patch', 'NaNxNaN', '--bits', '2', '--out', p('out', 'cb.json')], /patch/],
    ['bits of Infinity', () => ['train', '--images', p('held'), '--patch', '4x4', '--bits', 'Infinity', '--out', p('out', 'cb.json')], /--bits/],
    ['an output in a folder that does not exist', () => ['train', '--images', p('held'), '--patch', '4x4', '--bits', '1', '--out', p('nowhere', 'deeper', 'cb.json')], /nowhere/],
  ];

  it.each(cases)('reports %s in one line, exits non-zero and writes nothing', async (_what, args, pattern) => {
    const before = readdirSync(p('out')).sort();
    const r = await cli(...args());
    expectOneErrorLine(r, pattern);
    expect(readdirSync(p('out')).sort()).toEqual(before);
  });

  it('survives the 100 000-deep file as a process too: one line and status 1, not a crash', async () => {
    const failure = await run(process.execPath, [LAUNCHER, 'eval', '--codebook', p('deep.json'), '--images', p('held')]).catch((e: { code: number; stdout: string; stderr: string }) => e);
    expect('code' in failure ? failure.code : 0).toBe(1);
    expect(failure.stdout).toBe('');
    expect(failure.stderr.split('\n').filter(Boolean)).toHaveLength(1);
    expect(failure.stderr).toMatch(/^cellwright: error: .*deep\.json/);
  });
});
