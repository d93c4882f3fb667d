import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import type { Express } from 'express';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../server/app';
import { compose, type Composition } from '../../server/composition';
import { loadConfig } from '../../server/config';

let dir: string;
let c: Composition;
let app: Express;

beforeAll(() => {
  dir = mkdtempSync(path.join(tmpdir(), 'cellwright-dist-'));
  mkdirSync(path.join(dir, 'assets'));
  writeFileSync(path.join(dir, 'index.html'), '<!doctype html><div id="root">shell</div>');
  writeFileSync(path.join(dir, 'assets', 'main-abc123.js'), 'console.log(1)');
  // No request here touches the database; the pool connects lazily.
  c = compose(loadConfig({ NODE_ENV: 'production', DATA_DIR: path.join(dir, 'data'), LOG_LEVEL: 'silent' }));
  app = createApp({ ...c, clientDir: dir });
});
afterAll(async () => {
  await c.close();
  rmSync(dir, { recursive: true, force: true });
});

describe('serving the built client', () => {
  it('answers client routes with index.html so deep links work', async () => {
    for (const p of ['/', '/teams/3/members', '/invite/some-token']) {
      const res = await request(app).get(p);
      expect(res.status).toBe(200);
      expect(res.text).toContain('shell');
      expect(res.headers['cache-control']).toBe('no-cache');
      expect(res.headers['content-security-policy']).toContain("script-src 'self'");
    }
  });

  it('serves hashed assets as immutable and answers a missing one with 404, not the shell', async () => {
    const js = await request(app).get('/assets/main-abc123.js');
    expect(js.status).toBe(200);
    expect(js.headers['cache-control']).toContain('immutable');
    const missing = await request(app).get('/assets/gone-000.js');
    expect(missing.status).toBe(404);
    expect(missing.body.error.code).toBe('not_found');
  });

  it('keeps unknown /api paths as JSON 404', async () => {
    const res = await request(app).get('/api/teams');
    expect(res.status).toBe(404);
    expect(res.headers['content-type']).toMatch(/application\/json/);
  });
});
