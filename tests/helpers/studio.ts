// Set-up steps the studio API tests share: seabed tiles as PNGs, a set made through the upload route,
// and a run followed until its jobs are done.
import type { Express } from 'express';
import sharp from 'sharp';
import request from 'supertest';
import { expect } from 'vitest';
import { seabedSet } from '../../server/seed/seabed-tiles';
import { bearer, type Session } from './api';

export function seabedPngs(seed: number, count: number, width: number, height: number): Promise<Buffer[]> {
  return Promise.all(
    seabedSet(seed, count, width, height).map((tile) =>
      sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer(),
    ),
  );
}

/** Creates a set and uploads every file into it; all of them must be stored. */
export async function createSetWith(app: Express, s: Session, name: string, files: Buffer[]): Promise<number> {
  const created = await request(app).post(`/api/teams/${s.teamId}/image-sets`).set(bearer(s)).send({ name });
  expect(created.status).toBe(201);
  const id = created.body.imageSet.id as number;
  let upload = request(app).post(`/api/teams/${s.teamId}/image-sets/${id}/images`).set(bearer(s));
  files.forEach((f, i) => (upload = upload.attach('files', f, `${name}-${i}.png`)));
  const res = await upload;
  expect(res.status).toBe(201);
  expect(res.body.images).toHaveLength(files.length);
  return id;
}

/** A set of `count` seabed tiles, split into training and held-out images (a quarter held out, seeded). */
export async function splitSeabedSet(app: Express, s: Session, name: string, seed: number, count: number, width: number, height: number): Promise<number> {
  const id = await createSetWith(app, s, name, await seabedPngs(seed, count, width, height));
  const split = await request(app).post(`/api/teams/${s.teamId}/image-sets/${id}/split`).set(bearer(s)).send({ heldOutFraction: 0.25, seed: 3 });
  expect(split.status).toBe(200);
  return id;
}

/** Polls the run until it and every job of it (evaluation included) have succeeded; throws if it ends otherwise. */
export async function untilEvaluated(app: Express, s: Session, id: number): Promise<void> {
  for (let i = 0; i < 1200; i += 1) {
    const res = await request(app).get(`/api/teams/${s.teamId}/runs/${id}`).set(bearer(s));
    if (res.body.run.state === 'succeeded' && res.body.run.jobs.every((j: { state: string }) => j.state === 'succeeded')) return;
    if (['failed', 'cancelled'].includes(res.body.run.state)) throw new Error(`run ended ${res.body.run.state}: ${res.body.run.error}`);
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error('the run did not finish');
}

/** Polls the run until it reaches a terminal state. */
export async function waitForRun(app: Express, s: Session, id: number): Promise<{ state: string; error: string | null }> {
  for (;;) {
    const res = await request(app).get(`/api/teams/${s.teamId}/runs/${id}`).set(bearer(s));
    if (['succeeded', 'failed', 'cancelled'].includes(res.body.run.state)) return res.body.run;
    await new Promise((r) => setTimeout(r, 200));
  }
}

/** Starts a run and waits until it has succeeded. */
export async function finishedRun(app: Express, s: Session, body: object): Promise<number> {
  const created = await request(app).post(`/api/teams/${s.teamId}/runs`).set(bearer(s)).send(body);
  expect(created.status).toBe(201);
  const run = await waitForRun(app, s, created.body.run.id);
  expect(run.error).toBeNull();
  expect(run.state).toBe('succeeded');
  return created.body.run.id;
}
