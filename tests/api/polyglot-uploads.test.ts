// Polyglots through the upload route: images with an archive appended are refused by name even when the appended
// data ends the way the format itself ends (GIF trailer 0x3B, JPEG EOI FF D9) or the format has no end marker (TIFF);
// real images of every kind the walk reads are stored.
import sharp from 'sharp';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bearer, createTestApp, teamWithRoles, type TestApp } from '../helpers/api';

let t: TestApp;
let team: Awaited<ReturnType<typeof teamWithRoles>>;

// A zip local-file-header signature and some bytes: what an appended archive starts with (APPNOTE.TXT 4.3.7).
const zip = Buffer.from('PK\u0003\u0004\u0014\u0000\u0000\u0000\u0008\u0000 archive entry bytes', 'latin1');

/** Deterministic busy pixels, `pages` frames of width × height. */
function busy(width: number, height: number, pages = 1) {
  const raw = Buffer.alloc(width * height * pages * 3);
  for (let i = 0; i < raw.length; i++) raw[i] = (i * 7919 + (i >> 5) * 31) % 251;
  return sharp(raw, { raw: { width, height: height * pages, channels: 3, ...(pages > 1 ? { pageHeight: height } : {}) } });
}

async function newSet(name: string): Promise<number> {
  const res = await request(t.app).post(`/api/teams/${team.teamId}/image-sets`).set(bearer(team.engineer)).send({ name });
  expect(res.status).toBe(201);
  return res.body.imageSet.id as number;
}

function upload(setId: number, files: [Buffer, string][]) {
  let req = request(t.app).post(`/api/teams/${team.teamId}/image-sets/${setId}/images`).set(bearer(team.engineer));
  for (const [data, name] of files) req = req.attach('files', data, name);
  return req;
}

const count = async (table: string) => Number(((await t.db.knex(table).count({ n: '*' })) as { n: number }[])[0].n);

beforeAll(async () => {
  t = await createTestApp();
  team = await teamWithRoles(t, 'Polyglot Team');
});
afterAll(async () => {
  await t?.close();
});

describe('polyglot uploads', () => {
  it('refuses a GIF ending in 0x3B, a JPEG ending in FF D9 and a TIFF with a zip appended, naming each file', async () => {
    const gif = Buffer.concat([await busy(24, 16).gif().toBuffer(), zip, Buffer.from('/*<script>*/;', 'latin1')]);
    const jpeg = Buffer.concat([await busy(24, 16).jpeg().toBuffer(), zip, Buffer.from([0xff, 0xd9])]);
    const tiff = Buffer.concat([await busy(24, 16).tiff({ compression: 'lzw' }).toBuffer(), zip]);
    const setId = await newSet('Polyglots');
    const before = await count('images');
    const res = await upload(setId, [[gif, 'ends-in-trailer.gif'], [jpeg, 'ends-in-eoi.jpg'], [tiff, 'zip-appended.tif']]);
    expect(res.status).toBe(400);
    const rejected = res.body.error.details as { file: string; message: string }[];
    expect(rejected.map((r) => r.file).sort()).toEqual(['ends-in-eoi.jpg', 'ends-in-trailer.gif', 'zip-appended.tif']);
    const byFile = Object.fromEntries(rejected.map((r) => [r.file, r.message]));
    expect(byFile['ends-in-trailer.gif']).toMatch(new RegExp(`${zip.length + 13} bytes follow the end of the GIF image`));
    expect(byFile['ends-in-eoi.jpg']).toMatch(new RegExp(`${zip.length + 2} bytes follow the end of the JPEG image`));
    expect(byFile['zip-appended.tif']).toMatch(new RegExp(`${zip.length} bytes follow the end of the TIFF image`));
    expect(await count('images')).toBe(before);
  });

  it('stores real GIF, JPEG (progressive, EXIF), tiled, multi-page and BigTIFF images written by sharp', async () => {
    const files: [Buffer, string][] = [
      [await busy(24, 16, 3).gif().toBuffer(), 'animated.gif'],
      [await busy(24, 16).jpeg({ progressive: true }).toBuffer(), 'progressive.jpg'],
      [await busy(24, 16).withExif({ IFD0: { Copyright: 'Cellwright test' } }).jpeg().toBuffer(), 'exif.jpg'],
      [await busy(40, 40).tiff({ tile: true, tileWidth: 16, tileHeight: 16 }).toBuffer(), 'tiled.tif'],
      [await busy(24, 16, 3).tiff({ compression: 'lzw' }).toBuffer(), 'pages.tif'],
      [await busy(24, 16).tiff({ bigtiff: true, compression: 'deflate' }).toBuffer(), 'big.tif'],
      [await busy(24, 16).png().toBuffer(), 'plain.png'],
      [await busy(24, 16).webp().toBuffer(), 'plain.webp'],
    ];
    const setId = await newSet('Real images');
    const res = await upload(setId, files);
    expect(res.status, res.text.slice(0, 500)).toBe(201);
    expect((res.body.images as { fileName: string }[]).map((i) => i.fileName).sort()).toEqual(files.map(([, name]) => name).sort());
  });
});
