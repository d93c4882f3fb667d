import { existsSync, mkdtempSync, readdirSync, readFileSync, renameSync, rmSync, statSync, utimesSync, writeFileSync } from 'node:fs';
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

describe('discarding unused originals', () => {
  const hour = 60 * 60_000;
  const ageBy = (file: string, ms: number) => {
    const then = new Date(Date.now() - ms);
    utimesSync(file, then, then);
  };

  it('lists every original with its size and when it was last put', async () => {
    const a = await store.put(Buffer.from('first'));
    const b = await store.put(Buffer.from('second, longer'));
    const listed = [];
    for await (const batch of store.objects()) listed.push(...batch);
    expect(listed.map((e) => e.sha256).sort()).toEqual([a.sha256, b.sha256].sort());
    expect(listed.find((e) => e.sha256 === b.sha256)?.bytes).toBe('second, longer'.length);
  });

  it('renews the time of bytes put again, so a re-upload restarts their grace period', async () => {
    const { sha256 } = await store.put(Buffer.from('again'));
    ageBy(store.path(sha256), 2 * hour);
    expect((await store.put(Buffer.from('again'))).existed).toBe(true);
    expect(statSync(store.path(sha256)).mtimeMs).toBeGreaterThan(Date.now() - hour);
  });

  it('deletes an old unnamed original with its thumbnail, and keeps a recent or named one', async () => {
    const { sha256 } = await store.put(Buffer.from('old and unnamed'));
    const png = await sharp({ create: { width: 2, height: 2, channels: 3, background: '#000' } }).png().toBuffer();
    await store.putThumbnail(sha256, png);
    const cutoff = Date.now() - hour;
    expect(await store.discardUnused(sha256, { notAfterMs: cutoff, inUse: async () => false })).toBeNull();

    ageBy(store.path(sha256), 2 * hour);
    expect(await store.discardUnused(sha256, { notAfterMs: cutoff, inUse: async () => true })).toBeNull();
    expect(existsSync(store.path(sha256))).toBe(true);

    expect(await store.discardUnused(sha256, { notAfterMs: cutoff, inUse: async () => false })).toBe('old and unnamed'.length);
    expect(existsSync(store.path(sha256))).toBe(false);
    expect(existsSync(store.thumbnailPath(sha256))).toBe(false);
    expect(filesUnder(dir).filter((f) => f.includes('.sweep-'))).toEqual([]);
  });

  it('puts an original back when a record comes to name it while it is being discarded', async () => {
    const { sha256 } = await store.put(Buffer.from('claimed at the last moment'));
    ageBy(store.path(sha256), 2 * hour);
    let asked = 0;
    const freed = await store.discardUnused(sha256, { notAfterMs: Date.now() - hour, inUse: async () => ++asked > 1 });
    expect(freed).toBeNull();
    expect(asked).toBe(2);
    expect(readFileSync(store.path(sha256), 'utf8')).toBe('claimed at the last moment');
  });

  it('leaves a copy in place when the same bytes are put while it is being discarded', async () => {
    const bytes = Buffer.from('uploaded again meanwhile');
    const { sha256 } = await store.put(bytes);
    ageBy(store.path(sha256), 2 * hour);
    let asked = 0;
    await store.discardUnused(sha256, {
      notAfterMs: Date.now() - hour,
      inUse: async () => {
        // The second question comes after the original was moved aside: an upload arrives just then.
        if (++asked === 2) expect((await store.put(bytes)).existed).toBe(false);
        return false;
      },
    });
    expect(asked).toBe(2);
    expect(await store.read(sha256)).toEqual(bytes);
  });

  it('clears stale temporaries and orphaned thumbnails, and puts back an original a crashed sweep moved aside', async () => {
    const { sha256 } = await store.put(Buffer.from('moved aside, then the process died'));
    const fan = path.dirname(store.path(sha256));
    const aside = path.join(fan, `.sweep-${sha256}-a1b2c3d4e5f6`);
    renameSync(store.path(sha256), aside);
    const temp = path.join(fan, '.tmp-1-000000000000');
    writeFileSync(temp, 'partial');
    const orphan = sha256Of(Buffer.from('no original'));
    const png = await sharp({ create: { width: 2, height: 2, channels: 3, background: '#fff' } }).png().toBuffer();
    await store.putThumbnail(orphan, png);
    const fresh = path.join(fan, '.tmp-2-111111111111');
    writeFileSync(fresh, 'still being written');

    // Cut-off in the future for the first three (as if hours had passed), fresh one touched later still.
    const later = Date.now() + hour;
    utimesSync(fresh, new Date(later + hour), new Date(later + hour));
    const report = await store.removeLeftovers(later);
    expect(report.files).toBe(2);
    expect(existsSync(temp)).toBe(false);
    expect(existsSync(store.thumbnailPath(orphan))).toBe(false);
    expect(existsSync(fresh)).toBe(true);
    expect(existsSync(aside)).toBe(false);
    expect(await store.read(sha256)).toEqual(Buffer.from('moved aside, then the process died'));
  });
});
