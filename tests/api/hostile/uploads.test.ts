// Hostile uploads: every file an attacker or a broken tool might send is refused with a message that names
// it, nothing half-stored stays behind, and the server keeps answering.
import { existsSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer } from '../../helpers/api';
import { declaredSizePng, makeImage } from '../../unit/storage/support/images';
import { writeZip } from '../../unit/storage/support/zip-writer';
import { isErrorShape } from './routes';
import { buildWorld, newSet, rowCounts, type World } from './world';

const MiB = 1024 * 1024;
let w: World;
let dataDir: string;

beforeAll(async () => {
  w = await buildWorld({
    UPLOAD_MAX_BYTES: String(2 * MiB),
    UPLOAD_MAX_FILES: '6',
    IMAGE_MAX_PIXELS: '1000000',
    ZIP_MAX_ENTRIES: '10',
    ZIP_MAX_TOTAL_BYTES: String(4 * MiB),
  });
  dataDir = w.t.composition.config.dataDir;
});
afterAll(async () => {
  await w?.close();
});

/** Every file under a folder, relative to it. */
function filesUnder(root: string): string[] {
  if (!existsSync(root)) return [];
  const out: string[] = [];
  const walk = (dir: string) => {
    for (const name of readdirSync(dir)) {
      const full = path.join(dir, name);
      if (statSync(full).isDirectory()) walk(full);
      else out.push(path.relative(root, full));
    }
  };
  walk(root);
  return out.sort();
}

function upload(setId: number, files: [Buffer, string][]) {
  let req = request(w.t.app).post(`/api/teams/${w.teamId}/image-sets/${setId}/images`).set(bearer(w.engineer));
  for (const [data, name] of files) req = req.attach('files', data, name);
  return req;
}

async function expectHealthy() {
  const res = await request(w.t.app).get('/api/health');
  expect(res.status).toBe(200);
}

/** Sends the files, expects a refusal naming `pattern`, and checks that no row and no object file was added. */
async function expectRefused(files: [Buffer, string][], status: number, pattern: RegExp) {
  const setId = await newSet(w);
  const rows = await rowCounts(w);
  const objects = filesUnder(dataDir);
  const res = await upload(setId, files);
  expect(res.status).toBe(status);
  expect(isErrorShape(res.body)).toBe(true);
  expect(JSON.stringify(res.body.error)).toMatch(pattern);
  expect(await rowCounts(w)).toEqual(rows);
  expect(filesUnder(dataDir)).toEqual(objects);
  await expectHealthy();
  return res;
}

describe('hostile uploads', () => {
  it('refuses a file over the per-file limit with 413 and stores nothing', async () => {
    await expectRefused([[Buffer.alloc(2 * MiB + 1, 7), 'huge.png']], 413, /larger than the 2(\.0)? MiB limit|too large/i);
  });

  it('refuses more files than an upload may carry with 413', async () => {
    const png = await makeImage('png', { seed: 3, width: 8, height: 8 });
    await expectRefused(Array.from({ length: 7 }, (_, i) => [png, `t-${i}.png`] as [Buffer, string]), 413, /At most 6 files/);
  });

  it('refuses an image that declares more pixels than the limit', async () => {
    await expectRefused([[declaredSizePng(20_000, 20_000), 'claims-400mp.png']], 400, /claims-400mp\.png: 20000×20000 is 400000000 pixels, more than the limit/);
  });

  it('refuses a truncated PNG and a truncated JPEG, naming each', async () => {
    const png = await makeImage('png', { seed: 11, width: 200, height: 120 });
    const jpeg = await makeImage('jpeg', { seed: 12, width: 200, height: 120 });
    const res = await expectRefused(
      [
        [png.subarray(0, Math.floor(png.length / 2)), 'half.png'],
        [jpeg.subarray(0, Math.floor(jpeg.length / 2)), 'half.jpg'],
      ],
      400,
      /half\.png/,
    );
    const messages = (res.body.error.details as { file: string; message: string }[]).map((d) => d.message).join('\n');
    expect(messages).toMatch(/half\.png: .*(damaged|truncated|cannot be read)/);
    expect(messages).toMatch(/half\.jpg: .*(damaged|truncated|cannot be read)/);
  });

  it('refuses a zip bomb by the unpacked total, whatever its compressed size', async () => {
    // 64 MiB of zeros deflate to about 64 KiB: far under the request limit, far over the unpack budget.
    const bomb = writeZip([{ name: 'zeros.png', data: Buffer.alloc(64 * MiB) }]);
    expect(bomb.length).toBeLessThan(MiB);
    await expectRefused([[bomb, 'bomb.zip']], 400, /bomb\.zip/);
  });

  it('refuses a zip entry whose declared size lies about what it unpacks to', async () => {
    const png = await makeImage('png', { seed: 21, width: 64, height: 64 });
    const liar = writeZip([{ name: 'liar.png', data: Buffer.concat([png, Buffer.alloc(3 * MiB)]), declaredSize: png.length }]);
    await expectRefused([[liar, 'liar.zip']], 400, /liar/);
  });

  it('refuses zip entries that climb out of the archive and writes nothing outside the object store', async () => {
    const png = await makeImage('png', { seed: 31, width: 16, height: 16 });
    const zip = writeZip([
      { name: '../../evil.png', data: png },
      { name: '/etc/evil.png', data: png },
      { name: 'C:\\evil.png', data: png },
    ]);
    await expectRefused([[zip, 'climb.zip']], 400, /evil\.png/);
    expect(existsSync(path.join(dataDir, '..', 'evil.png'))).toBe(false);
    expect(existsSync(path.join(dataDir, '..', '..', 'evil.png'))).toBe(false);
  });

  it('uses an uploaded file name as a label only, never as a path', async () => {
    const setId = await newSet(w);
    const before = filesUnder(dataDir);
    const png = await makeImage('png', { seed: 41, width: 16, height: 16 });
    const res = await upload(setId, [[png, '../../evil.png']]);
    expect(res.status).toBe(201);
    expect(res.body.images[0].fileName).not.toContain('..');
    const added = filesUnder(dataDir).filter((f) => !before.includes(f));
    expect(added.length).toBeGreaterThan(0);
    // Content-addressed: new files are named by hex digest under objects/ (and thumbnails), never by the client.
    for (const f of added) {
      expect(f).not.toMatch(/evil/);
      expect(f.startsWith('objects/') || f.startsWith('thumbnails/')).toBe(true);
    }
    expect(existsSync(path.join(dataDir, '..', '..', 'evil.png'))).toBe(false);
    expect(existsSync(path.join(dataDir, '..', 'evil.png'))).toBe(false);
  });

  it('refuses polyglots: a GIF with a script appended and a PNG with a zip appended, naming each file', async () => {
    // Bytes after the format's end marker (GIF trailer 0x3B, PNG IEND chunk) are how polyglots are made
    // (common practice); the decoders ignore them, so the upload must look for them itself.
    const gif = await sharp({ create: { width: 8, height: 8, channels: 3, background: '#204060' } }).gif().toBuffer();
    const scripted = Buffer.concat([gif, Buffer.from('\n/*<script>*/alert(document.domain)//</script>\n')]);
    const png = await sharp({ create: { width: 8, height: 8, channels: 3, background: '#406020' } }).png().toBuffer();
    const zipped = Buffer.concat([png, Buffer.from('PK\u0003\u0004 archive bytes follow', 'latin1')]);
    const setId = await newSet(w);
    const res = await upload(setId, [[scripted, 'pic.gif'], [zipped, 'pic.png']]);
    expect(res.status).toBe(400);
    expect(isErrorShape(res.body)).toBe(true);
    const rejected = res.body.error.details as { file: string; message: string }[];
    expect(rejected.map((r) => r.file).sort()).toEqual(['pic.gif', 'pic.png']);
    for (const r of rejected) expect(r.message).toMatch(/follow the end of the (GIF|PNG) image/);
    await expectHealthy();
  });

  it('serves a stored original only as an image, never as something a browser would run', async () => {
    const gif = await sharp({ create: { width: 8, height: 8, channels: 3, background: '#204060' } }).gif().toBuffer();
    const setId = await newSet(w);
    const res = await upload(setId, [[gif, 'plain.gif']]);
    expect(res.status).toBe(201);
    const original = await request(w.t.app).get(`/api/teams/${w.teamId}/images/${res.body.images[0].id}/original`).set(bearer(w.engineer));
    expect(original.status).toBe(200);
    expect(original.headers['content-type']).toBe('image/gif');
    expect(original.headers['x-content-type-options']).toBe('nosniff');
    await expectHealthy();
  });

  it('keeps every stored object equal to the SHA-256 its row names after all of the above', async () => {
    const { createHash } = await import('node:crypto');
    const rows = (await w.t.db.knex('images').select('sha256')) as { sha256: string }[];
    expect(rows.length).toBeGreaterThan(0);
    for (const sha of new Set(rows.map((r) => r.sha256))) {
      const bytes = await w.t.composition.contentStore.read(sha);
      // SHA-256 via node:crypto (FIPS 180-4).
      expect(createHash('sha256').update(bytes).digest('hex')).toBe(sha);
    }
  });
});
