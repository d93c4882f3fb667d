import request from 'supertest';
import { it, expect } from 'vitest';
import { bearer } from '../../helpers/api';
import { makeImage } from '../../unit/storage/support/images';
import { writeZip } from '../../unit/storage/support/zip-writer';
import { buildWorld, newSet } from './world';
it('probe', async () => {
  const w = await buildWorld();
  const png = await makeImage('png', { seed: 5, width: 16, height: 16 });
  const zip = writeZip([{ name: 'payload.js', data: Buffer.from('alert(1)') }]);
  const setId = await newSet(w);
  const res = await request(w.t.app).post(`/api/teams/${w.teamId}/image-sets/${setId}/images`).set(bearer(w.engineer)).attach('files', Buffer.concat([png, zip]), 'poly.png');
  console.log(res.status, JSON.stringify(res.body).slice(0, 400));
  const jpg = await makeImage('jpeg', { seed: 6, width: 16, height: 16 });
  const res2 = await request(w.t.app).post(`/api/teams/${w.teamId}/image-sets/${setId}/images`).set(bearer(w.engineer)).attach('files', Buffer.concat([jpg, zip]), 'poly.jpg');
  console.log(res2.status, JSON.stringify(res2.body).slice(0, 400));
  await w.close();
});
