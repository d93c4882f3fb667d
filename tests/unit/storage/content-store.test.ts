import { mkdtempSync, readdirSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createContentStore, sha256Of, type ContentStore } from '../../../server/storage/content-store';

// FIPS 180-4 / NIST example values: SHA-256("abc").
const abcDigest = 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad';

let dir: string;
let store: ContentStore;

beforeEach(() => {
  dir = mkdtempSync(path.join(tmpdir(), 'cellwright-store-'));
  store = createContentStore(dir);
});
afterEach(() => {
  rmSync(dir, { recursive: true, force: true });
});

/** Every file under a folder, relative to it. */
function filesUnder(root: string): string[] {
  const out: string[] = [];
  const walk = (d: string) => {
    for (const name of readdirSync(d)) {
      const full = path.join(d, name);
      if (statSync(full).isDirectory()) walk(full);
      else out.push(path.relative(root, full));
    }
  };
  walk(root);
  return out.sort();
}

describe('content store', () => {
  it('names an object by the SHA-256 of its bytes, under a folder of its first two hex digits', async () => {
    const put = await store.put(Buffer.from('abc'));
    // Published digest of "abc" (FIPS 180-4 example), not our own hash function's say-so.
    expect(put).toEqual({ sha256: abcDigest, existed: false });
    expect(store.path(abcDigest)).toBe(path.join(dir, 'objects', 'ba', abcDigest));
    expect(readFileSync(store.path(abcDigest), 'utf8')).toBe('abc');
    expect(filesUnder(dir)).toEqual([path.join('objects', 'ba', abcDigest)]);
  });

  it('stores the same bytes once however often and however concurrently they are put', async () => {
    const data = Buffer.from('seabed tile 0042');
    const results = await Promise.all([store.put(data), store.put(data), store.put(data)]);
    expect(new Set(results.map((r) => r.sha256))).toEqual(new Set([sha256Of(data)]));
    expect((await store.put(data)).existed).toBe(true);
    // No temporary files are left behind beside the one object.
    expect(filesUnder(dir)).toEqual([path.join('objects', sha256Of(data).slice(0, 2), sha256Of(data))]);
    expect(await store.read(sha256Of(data))).toEqual(data);
  });

  it('answers has() only for stored objects', async () => {
    const { sha256 } = await store.put(Buffer.from('present'));
    expect(await store.has(sha256)).toBe(true);
    expect(await store.has(sha256Of(Buffer.from('absent')))).toBe(false);
  });

  it('refuses anything but a 64-digit lower-case hex hash as an object name', () => {
    for (const bad of ['../../etc/passwd', abcDigest.toUpperCase(), abcDigest.slice(1), `${abcDigest}/x`, '']) {
      expect(() => store.path(bad)).toThrow(RangeError);
      expect(() => store.thumbnailPath(bad)).toThrow(RangeError);
    }
  });

  it('keeps thumbnails apart from originals and tells WebP from PNG by their bytes', async () => {
    const { sha256 } = await store.put(Buffer.from('original bytes'));
    const webp = await sharp({ create: { width: 4, height: 4, channels: 3, background: '#204060' } }).webp().toBuffer();
    await store.putThumbnail(sha256, webp);
    expect(store.thumbnailPath(sha256)).toBe(path.join(dir, 'thumbnails', sha256.slice(0, 2), sha256));
    expect(await store.readThumbnail(sha256)).toEqual({ data: webp, contentType: 'image/webp' });

    const png = await sharp({ create: { width: 4, height: 4, channels: 3, background: '#204060' } }).png().toBuffer();
    await store.putThumbnail(sha256, png);
    expect((await store.readThumbnail(sha256))?.contentType).toBe('image/png');
    expect(await store.read(sha256)).toEqual(Buffer.from('original bytes'));
  });

  it('refuses a thumbnail that is neither PNG nor WebP and reports a missing one as null', async () => {
    const { sha256 } = await store.put(Buffer.from('x'));
    await expect(store.putThumbnail(sha256, Buffer.from('GIF89a not allowed'))).rejects.toThrow(/PNG or WebP/);
    expect(await store.readThumbnail(sha256)).toBeNull();
  });
});
