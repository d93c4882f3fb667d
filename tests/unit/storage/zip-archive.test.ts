import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { isZipArchive, isZipFile, unpackZip, unsafeEntryPath, zipBudget } from '../../../server/services/uploads/zip-archive';
import { createSpool } from '../../../server/storage/spool';
import { writeZip } from './support/zip-writer';

const MiB = 1024 * 1024;

const spoolDir = mkdtempSync(path.join(tmpdir(), 'cellwright-zip-spool-'));
afterAll(() => rmSync(spoolDir, { recursive: true, force: true }));

interface Unpacked {
  label: string;
  path: string;
  data: Buffer;
}

/** Unpacks from a file, as uploads do, reading each entry while onEntry holds it; nothing is left in the scratch folder. */
async function unpack(archive: Buffer, budget = zipBudget(100, 64 * MiB), maxEntryBytes = 16 * MiB) {
  const scratch = await createSpool(spoolDir).folder();
  const file = path.join(scratch.path, 'archive.zip');
  writeFileSync(file, archive);
  const members: Unpacked[] = [];
  const rejected = await unpackZip(file, 'tiles.zip', { maxEntryBytes, budget, extract: scratch.write }, async (m) => {
    members.push({ label: m.label, path: m.path, data: readFileSync(m.file.path) });
  });
  // Every unpacked entry is deleted once handed on; only the archive itself remains.
  expect(readdirSync(scratch.path)).toEqual(['archive.zip']);
  await scratch.remove();
  return { members, rejected };
}

describe('zip archives', () => {
  it('recognises an archive by its local file header signature, not by its name', () => {
    // "PK\x03\x04" opens every zip holding a file (PKWARE APPNOTE.TXT 4.3.7).
    expect(isZipArchive(writeZip([{ name: 'a.png', data: Buffer.from('x') }]))).toBe(true);
    expect(isZipArchive(Buffer.from('PK\x05\x06'))).toBe(false);
    expect(isZipArchive(Buffer.from('\x89PNG\r\n\x1a\n'))).toBe(false);
  });

  it('recognises an archive on disk by its first four bytes', async () => {
    const dir = mkdtempSync(path.join(spoolDir, 'head-'));
    writeFileSync(path.join(dir, 'a'), writeZip([{ name: 'a.png', data: Buffer.from('x') }]));
    writeFileSync(path.join(dir, 'b'), 'PK');
    expect(await isZipFile(path.join(dir, 'a'))).toBe(true);
    expect(await isZipFile(path.join(dir, 'b'))).toBe(false);
  });

  it('unpacks an archive written by Info-ZIP zip, folders included, skipping folder and dot entries', async () => {
    const work = mkdtempSync(path.join(tmpdir(), 'cellwright-zip-'));
    try {
      mkdirSync(path.join(work, 'in', 'reef'), { recursive: true });
      mkdirSync(path.join(work, 'in', '__MACOSX'), { recursive: true });
      writeFileSync(path.join(work, 'in', 'reef', 'tile-01.png'), 'first tile');
      writeFileSync(path.join(work, 'in', 'tile-02.png'), Buffer.alloc(70_000, 7));
      writeFileSync(path.join(work, 'in', '.DS_Store'), 'finder');
      writeFileSync(path.join(work, 'in', '__MACOSX', '._tile-02.png'), 'fork');
      // Info-ZIP's zip is a reference writer of the format, independent of the reader under test.
      execFileSync('zip', ['-q', '-r', path.join(work, 'out.zip'), '.'], { cwd: path.join(work, 'in') });
      const { members, rejected } = await unpack(readFileSync(path.join(work, 'out.zip')));
      expect(rejected).toEqual([]);
      expect(members.map((m) => m.path).sort()).toEqual(['reef/tile-01.png', 'tile-02.png']);
      expect(members.find((m) => m.path === 'reef/tile-01.png')!.data.toString()).toBe('first tile');
      expect(members.find((m) => m.path === 'tile-02.png')!.data).toEqual(Buffer.alloc(70_000, 7));
      expect(members[0].label).toMatch(/^tiles\.zip\//);
    } finally {
      rmSync(work, { recursive: true, force: true });
    }
  });

  it('refuses entries whose paths leave the archive, naming each, and keeps the rest', async () => {
    const hostile = ['../escape.png', '/etc/cron.d/x.png', 'C:/Windows/x.png', 'tiles\\..\\..\\up.png', 'a/../../b.png'];
    const archive = writeZip([
      { name: 'good/one.png', data: Buffer.from('one') },
      ...hostile.map((name) => ({ name, data: Buffer.from('bad') })),
      { name: 'two.png', data: Buffer.from('two') },
    ]);
    const { members, rejected } = await unpack(archive);
    expect(members.map((m) => m.path)).toEqual(['good/one.png', 'two.png']);
    expect(rejected.map((r) => r.file)).toEqual(hostile.map((n) => `tiles.zip/${n}`));
    for (const [i, name] of hostile.entries()) expect(rejected[i].message).toContain(`"${name}"`);
  });

  it('classifies unsafe paths the way the zip path rules describe them', () => {
    expect(unsafeEntryPath('reef/tile.png')).toBeNull();
    expect(unsafeEntryPath('reef/..tile.png')).toBeNull();
    expect(unsafeEntryPath('../tile.png')).toMatch(/\.\./);
    expect(unsafeEntryPath('/tile.png')).toMatch(/absolute/);
    expect(unsafeEntryPath('d:tile.png')).toMatch(/drive/);
    expect(unsafeEntryPath('reef\\tile.png')).toMatch(/backslash/);
    expect(unsafeEntryPath('reef/\u0000.png')).toMatch(/control/);
  });

  it('refuses a whole archive that would unpack beyond the byte budget before unpacking any of it', async () => {
    // 12 MiB of zeros deflate to a few KiB: a small bomb against an 8 MiB budget.
    const archive = writeZip([
      { name: 'a.png', data: Buffer.alloc(6 * MiB) },
      { name: 'b.png', data: Buffer.alloc(6 * MiB) },
    ]);
    expect(archive.length).toBeLessThan(64 * 1024);
    const { members, rejected } = await unpack(archive, zipBudget(100, 8 * MiB));
    expect(members).toEqual([]);
    expect(rejected).toHaveLength(1);
    expect(rejected[0].file).toBe('tiles.zip');
    expect(rejected[0].message).toMatch(/unpacks to 12 MiB, more than .* 8 MiB/);
  });

  it('shares the budget between the archives of one upload', async () => {
    const budget = zipBudget(3, 64 * MiB);
    const first = await unpack(writeZip([{ name: 'a.png', data: Buffer.from('a') }, { name: 'b.png', data: Buffer.from('b') }]), budget);
    expect(first.members).toHaveLength(2);
    const second = await unpack(writeZip([{ name: 'c.png', data: Buffer.from('c') }, { name: 'd.png', data: Buffer.from('d') }]), budget);
    expect(second.members).toEqual([]);
    expect(second.rejected[0].message).toMatch(/holds 2 entries, more than the 1 left of the 3/);
  });

  it('rejects an entry that unpacks to more bytes than its header declares', async () => {
    const archive = writeZip([
      { name: 'liar.png', data: Buffer.alloc(2 * MiB), declaredSize: 1000 },
      { name: 'honest.png', data: Buffer.from('ok') },
    ]);
    const { members, rejected } = await unpack(archive);
    expect(members.map((m) => m.path)).toEqual(['honest.png']);
    expect(rejected).toEqual([{ file: 'tiles.zip/liar.png', message: expect.stringMatching(/^tiles\.zip\/liar\.png: cannot be unpacked/) }]);
  });

  it('rejects encrypted, oversized and nested-archive entries by name', async () => {
    const inner = writeZip([{ name: 'deep.png', data: Buffer.from('deep') }]);
    const archive = writeZip([
      { name: 'locked.png', data: Buffer.from('secret'), encryptedFlag: true },
      { name: 'huge.png', data: Buffer.alloc(3 * MiB, 1) },
      { name: 'inner.zip', data: inner },
      { name: 'fine.png', data: Buffer.from('fine') },
    ]);
    const { members, rejected } = await unpack(archive, zipBudget(100, 64 * MiB), 2 * MiB);
    expect(members.map((m) => m.path)).toEqual(['fine.png']);
    expect(rejected.map((r) => r.file)).toEqual(['tiles.zip/locked.png', 'tiles.zip/huge.png', 'tiles.zip/inner.zip']);
    expect(rejected[0].message).toMatch(/encrypted/);
    expect(rejected[1].message).toMatch(/3 MiB, larger than the 2 MiB limit/);
    expect(rejected[2].message).toMatch(/archives inside archives/);
  });

  it('reports an archive that is not readable as one rejection naming it', async () => {
    const archive = writeZip([{ name: 'a.png', data: Buffer.from('a') }]);
    const { members, rejected } = await unpack(archive.subarray(0, archive.length - 10));
    expect(members).toEqual([]);
    expect(rejected).toEqual([{ file: 'tiles.zip', message: expect.stringMatching(/^tiles\.zip: not a readable zip archive/) }]);
  });
});
