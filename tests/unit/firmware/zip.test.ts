// The firmware bundle as a zip of stored files (PKWARE APPNOTE.TXT section 4), read back by an independent reader
// (python3's zipfile, else Debian's unzip), extracted and compiled with gcc.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { decode, encode, firmwareBundle, firmwareZip, shutdownEngineWorkers, writeZip } from '../../../server/engine';
import { madeUpCodebook, madeUpImage } from '../channel/fixtures';

let root: string;
beforeAll(() => {
  root = mkdtempSync(join(tmpdir(), 'cw-zip-'));
  execFileSync('bash', ['scripts/ensure-gcc.sh'], { stdio: 'inherit' });
});
afterAll(async () => {
  rmSync(root, { recursive: true, force: true });
  await shutdownEngineWorkers();
});

const hasPython = spawnSync('python3', ['-c', 'import zipfile'], { stdio: 'ignore' }).status === 0;

/** Lists, tests (every CRC-32) and extracts an archive with a reader that is not ours: name → size. */
function readWithOutsideTool(zipPath: string, into: string): Record<string, number> {
  if (hasPython) {
    const script = [
      'import json, sys, zipfile',
      'z = zipfile.ZipFile(sys.argv[1])',
      'bad = z.testzip()',
      'assert bad is None, "bad CRC in " + str(bad)',
      'assert all(i.compress_type == zipfile.ZIP_STORED for i in z.infolist())',
      'z.extractall(sys.argv[2])',
      'print(json.dumps({i.filename: i.file_size for i in z.infolist()}))',
    ].join('\n');
    return JSON.parse(execFileSync('python3', ['-c', script, zipPath, into], { encoding: 'utf8' }));
  }
  execFileSync('unzip', ['-tq', zipPath]);
  execFileSync('unzip', ['-q', zipPath, '-d', into]);
  const listing = execFileSync('unzip', ['-Z', '-l', zipPath], { encoding: 'utf8' });
  const sizes: Record<string, number> = {};
  for (const line of listing.split('\n')) {
    const m = /^-\S+\s+\S+\s+\S+\s+(\d+)\s+\S+\s+\d+\s+stor\s+\S+\s+\S+\s+(\S+)$/.exec(line.trim());
    if (m) sizes[m[2]] = Number(m[1]);
  }
  return sizes;
}

describe('writeZip', () => {
  it('writes an archive an outside reader lists, checks and extracts byte for byte', () => {
    const entries = [
      { name: 'a.txt', data: 'hello\n' },
      { name: 'dir/ünïcode.bin', data: Uint8Array.from({ length: 300 }, (_, i) => (i * 37) & 0xff) },
      { name: 'empty', data: '' },
    ];
    const path = join(root, 'plain.zip');
    writeFileSync(path, writeZip(entries, new Date(Date.UTC(2026, 11, 5, 17, 30, 42))));
    const out = join(root, 'plain');
    const sizes = readWithOutsideTool(path, out);
    expect(sizes).toEqual({ 'a.txt': 6, 'dir/ünïcode.bin': 300, empty: 0 });
    expect(readFileSync(join(out, 'a.txt'), 'utf8')).toBe('hello\n');
    expect(new Uint8Array(readFileSync(join(out, 'dir', 'ünïcode.bin')))).toEqual(entries[1].data);
  });

  it('stores the date as MS-DOS date and time, and the same entries always give the same bytes', () => {
    const when = new Date(Date.UTC(2026, 11, 5, 17, 30, 42));
    const a = writeZip([{ name: 'x', data: 'y' }], when);
    expect(a.equals(writeZip([{ name: 'x', data: 'y' }], when))).toBe(true);
    // APPNOTE 4.4.6: time = h << 11 | m << 5 | s / 2, date = (year − 1980) << 9 | month << 5 | day; local header bytes 10..13.
    expect(a.readUInt16LE(10)).toBe((17 << 11) | (30 << 5) | 21);
    expect(a.readUInt16LE(12)).toBe((46 << 9) | (12 << 5) | 5);
    expect(a.readUInt32LE(a.length - 22)).toBe(0x06054b50);
  });

  it('refuses names that would land outside the folder, and duplicates', () => {
    for (const name of ['/etc/x', '../x', 'a/../../x', 'a\\b', '', 'a//b']) expect(() => writeZip([{ name, data: '' }])).toThrow(/not a relative path/);
    expect(() => writeZip([{ name: 'a', data: '' }, { name: 'a', data: '' }])).toThrow(/twice/);
  });
});

describe('firmwareZip', () => {
  it('holds the export\'s files, which compile with one gcc command and decode a raw file as the studio does', async () => {
    const book = madeUpCodebook({ size: 37, w: 3, h: 2, color: 'rgb' });
    const zip = firmwareZip(book, { modified: new Date(Date.UTC(2026, 0, 2)) });
    const path = join(root, 'fw.zip');
    writeFileSync(path, zip);
    const out = join(root, 'fw');
    const sizes = readWithOutsideTool(path, out);
    const bundle = firmwareBundle(book);
    expect(Object.keys(sizes).sort()).toEqual(bundle.files.map((f) => f.name).sort());
    for (const f of bundle.files) expect(readFileSync(join(out, f.name), 'utf8')).toBe(f.text);
    const sources = readdirSync(out).filter((n) => n.endsWith('.c')).map((n) => join(out, n));
    execFileSync('gcc', ['-std=c99', '-Wall', '-Wextra', '-Werror', '-O2', '-o', join(out, 'decode_file'), ...sources]);
    const image = madeUpImage('rgb', 23, 17, 4);
    const { container } = await encode(book, image, { payload: 'raw', resyncRows: 3 });
    writeFileSync(join(out, 'in.cwvq'), container);
    execFileSync(join(out, 'decode_file'), [join(out, 'in.cwvq'), join(out, 'out.ppm')]);
    const ppm = readFileSync(join(out, 'out.ppm'));
    const header = Buffer.from('P6\n23 17\n255\n');
    expect(ppm.subarray(0, header.length).equals(header)).toBe(true);
    expect(new Uint8Array(ppm.subarray(header.length))).toEqual(decode(book, container).pixels);
  });
});
