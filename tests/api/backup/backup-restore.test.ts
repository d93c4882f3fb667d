// A backup taken from a working studio restores into an empty database and DATA_DIR with every user, image,
// run and codebook found again, bytes and checksums intact; a damaged backup or a non-empty target is refused.
import { execFile } from 'node:child_process';
import { createHash, randomBytes } from 'node:crypto';
import { cpSync, existsSync, lstatSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, symlinkSync, unlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import knexFactory, { type Knex } from 'knex';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildKnexConfig } from '../../../server/db/knex-config';
import { contentStoreLock } from '../../../server/storage/content-store';
import { bearer } from '../../helpers/api';
import { createTestDatabase, dropDatabase, testDbSettings, type TestDatabase } from '../../helpers/db';
import { buildWorld, type World } from '../hostile/world';

const run = promisify(execFile);
const root = fileURLToPath(new URL('../../..', import.meta.url));
let w: World;
let work: string;
let runId: number;

// SHA-256 via node:crypto (FIPS 180-4).
const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

/** Runs scripts/backup.ts; with `umask`, under that file-mode creation mask (set by the shell that starts node). */
function script(args: string[], env: Record<string, string>, umask?: string) {
  const argv = [process.execPath, '--import', 'tsx', path.join(root, 'scripts/backup.ts'), ...args];
  const [file, fileArgs] = umask === undefined ? [argv[0], argv.slice(1)] : ['/bin/sh', ['-c', `umask ${umask} && exec "$@"`, 'sh', ...argv]];
  return run(file, fileArgs, { cwd: root, env: { ...process.env, ...env }, timeout: 120_000 }).then(
    (r) => ({ code: 0, stdout: r.stdout, stderr: r.stderr }),
    (e: { code: number; stdout: string; stderr: string }) => ({ code: e.code, stdout: e.stdout, stderr: e.stderr }),
  );
}

function envFor(database: string, dataDir: string): Record<string, string> {
  const s = testDbSettings(database);
  return { DB_HOST: s.host, DB_PORT: String(s.port), DB_USER: s.user, DB_PASSWORD: s.password, DB_NAME: database, DATA_DIR: dataDir, JWT_SECRET: 'b'.repeat(40), LOG_LEVEL: 'silent' };
}

/** An empty database (no tables) named like the test helpers' ones, so they may drop it. */
async function emptyDatabase(): Promise<{ name: string; knex: Knex; destroy(): Promise<void> }> {
  const made: TestDatabase = await createTestDatabase({ migrate: false });
  await made.knex.destroy();
  const knex = knexFactory(buildKnexConfig(testDbSettings(made.name), { min: 0, max: 2 }));
  return { name: made.name, knex, destroy: async () => (await knex.destroy(), await dropDatabase(made.name)) };
}

const snapshot = async (knex: Knex) => ({
  users: await knex('users').orderBy('id').select('id', 'email', 'password_hash'),
  images: await knex('images').orderBy('id').select('id', 'sha256', 'bytes', 'file_name', 'role'),
  runs: await knex('runs').orderBy('id').select('id', 'name', 'state', 'held_out_hash'),
  codebooks: ((await knex('codebooks').orderBy('id').select('id', 'run_id', 'size', 'checksum', 'codewords')) as Record<string, unknown>[]).map((c): Record<string, unknown> => ({ ...c, codewords: sha256(c.codewords as Buffer) })),
  audit: Number(((await knex('audit_log').count({ n: '*' })) as { n: number }[])[0].n),
});

beforeAll(async () => {
  w = await buildWorld();
  work = mkdtempSync(path.join(tmpdir(), 'cw-backup-'));
  // One small run trained to the end, so the backup holds real codebooks.
  const created = await request(w.t.app)
    .post(`/api/teams/${w.teamId}/runs`)
    .set(bearer(w.engineer))
    .send({ name: 'Backed-up sweep', trainingSetId: w.setId, heldOutSetId: w.setId, patch: { width: 4, height: 4 }, bits: { from: 1, to: 3 }, maxIterations: 10, seed: 2 });
  expect(created.status).toBe(201);
  runId = created.body.run.id;
  await w.t.composition.jobs.runner.start();
  for (let i = 0; i < 1200; i += 1) {
    const res = await request(w.t.app).get(`/api/teams/${w.teamId}/runs/${runId}`).set(bearer(w.engineer));
    if (res.body.run.state === 'succeeded') break;
    if (['failed', 'cancelled'].includes(res.body.run.state)) throw new Error(`run ended ${res.body.run.state}: ${res.body.run.error}`);
    await new Promise((r) => setTimeout(r, 100));
  }
  await w.t.composition.jobs.runner.stop();
});

afterAll(async () => {
  await w?.t.composition.jobs.pool.destroy();
  await w?.close();
  if (work) rmSync(work, { recursive: true, force: true });
});

describe('backup and restore', () => {
  it('restores every user, image, run and codebook with matching checksums into an empty database and DATA_DIR', async () => {
    const original = await snapshot(w.t.db.knex);
    expect(original.codebooks.filter((c) => c.run_id === runId)).toHaveLength(3);
    const out = path.join(work, 'nightly');
    const made = await script(['backup', '--out', out], envFor(w.t.db.name, w.t.composition.config.dataDir));
    expect(made.stderr).toBe('');
    expect(made.code).toBe(0);
    expect(made.stdout).toMatch(/^backed up database cellwright_t_\w+ and \d+ files/);
    // Nothing but the finished folder beside it: the partial one was renamed into place.
    expect(readdirSync(work)).toEqual(['nightly']);

    const manifest = JSON.parse(readFileSync(path.join(out, 'manifest.json'), 'utf8')) as { files: { path: string; sha256: string }[]; database: { dump: { sha256: string } } };
    expect(manifest.database.dump.sha256).toBe(sha256(readFileSync(path.join(out, 'database.sql'))));
    for (const f of manifest.files) expect(sha256(readFileSync(path.join(out, f.path)))).toBe(f.sha256);
    for (const img of original.images as { sha256: string }[]) expect(manifest.files.some((f) => f.path === `objects/${img.sha256.slice(0, 2)}/${img.sha256}`)).toBe(true);

    const target = await emptyDatabase();
    const dataDir = path.join(work, 'restored-data');
    try {
      const restored = await script(['restore', '--from', out], envFor(target.name, dataDir));
      expect(restored.stderr).toBe('');
      expect(restored.code).toBe(0);
      expect(await snapshot(target.knex)).toEqual(original);
      for (const img of original.images as { sha256: string }[]) {
        expect(sha256(readFileSync(path.join(dataDir, 'objects', img.sha256.slice(0, 2), img.sha256)))).toBe(img.sha256);
      }

      // Restoring again over what is now a full database is refused, and changes nothing.
      const again = await script(['restore', '--from', out], envFor(target.name, path.join(work, 'other-data')));
      expect(again.code).not.toBe(0);
      expect(again.stderr).toMatch(/^backup: error: database cellwright_t_\w+ is not empty/);
      expect(again.stderr.trim().split('\n')).toHaveLength(1);
      expect(existsSync(path.join(work, 'other-data', 'objects'))).toBe(false);
    } finally {
      await target.destroy();
    }
  });

  it('refuses a backup whose files no longer match the manifest, before touching the target', async () => {
    const out = path.join(work, `tampered-${randomBytes(3).toString('hex')}`);
    expect((await script(['backup', '--out', out], envFor(w.t.db.name, w.t.composition.config.dataDir))).code).toBe(0);
    const manifest = JSON.parse(readFileSync(path.join(out, 'manifest.json'), 'utf8')) as { files: { path: string }[] };
    const victim = path.join(out, manifest.files.find((f) => f.path.startsWith('objects/'))!.path);
    const bytes = readFileSync(victim);
    bytes[bytes.length - 1] ^= 0xff;
    writeFileSync(victim, bytes);

    const target = await emptyDatabase();
    try {
      const res = await script(['restore', '--from', out], envFor(target.name, path.join(work, 'never')));
      expect(res.code).not.toBe(0);
      expect(res.stderr).toMatch(/^backup: error: backup: objects\/.* does not match its checksum in the manifest\n$/);
      const tables = (await target.knex('information_schema.tables').where({ table_schema: target.name }).count({ n: '*' })) as { n: number }[];
      expect(Number(tables[0].n)).toBe(0);
      expect(existsSync(path.join(work, 'never'))).toBe(false);
    } finally {
      await target.destroy();
    }
  });

  it('waits while a store sweep holds the store, then completes', async () => {
    const out = path.join(work, `after-sweep-${randomBytes(3).toString('hex')}`);
    let made: ReturnType<typeof script> | undefined;
    // The lock the sweep takes (services/store-sweep), held here on a connection of the server's pool.
    await w.t.composition.db.withNamedLock(contentStoreLock, 5, async () => {
      made = script(['backup', '--out', out], envFor(w.t.db.name, w.t.composition.config.dataDir));
      await new Promise((r) => setTimeout(r, 3_000));
      expect(existsSync(out)).toBe(false);
    });
    const res = await made!;
    expect(res.stderr).toBe('');
    expect(res.code).toBe(0);
    expect(existsSync(path.join(out, 'manifest.json'))).toBe(true);
  });

  it('refuses to write over an existing folder', async () => {
    const res = await script(['backup', '--out', work], envFor(w.t.db.name, w.t.composition.config.dataDir));
    expect(res.code).not.toBe(0);
    expect(res.stderr).toMatch(/^backup: error: .* already exists/);
  });

  it('writes its folders 0700 and its files 0600 whatever the umask', async () => {
    const out = path.join(work, `private-${randomBytes(3).toString('hex')}`);
    // umask 000 would leave new folders 0777 and files 0666; 0277 would take the owner's own write bit away.
    for (const [umask, where] of [['000', out], ['277', `${out}-strict`]] as const) {
      const made = await script(['backup', '--out', where], envFor(w.t.db.name, w.t.composition.config.dataDir), umask);
      expect(made.stderr).toBe('');
      expect(made.code).toBe(0);
      const modes: Record<string, string> = {};
      const walk = (dir: string, rel: string) => {
        modes[rel || '.'] = (statSync(dir).mode & 0o777).toString(8);
        for (const name of readdirSync(dir)) {
          const full = path.join(dir, name);
          if (statSync(full).isDirectory()) walk(full, path.join(rel, name));
          else modes[path.join(rel, name)] = (statSync(full).mode & 0o777).toString(8);
        }
      };
      walk(where, '');
      expect(Object.keys(modes)).toEqual(expect.arrayContaining(['.', 'database.sql', 'manifest.json', 'objects']));
      for (const [rel, mode] of Object.entries(modes)) {
        const folder = statSync(path.join(where, rel)).isDirectory();
        expect({ rel, mode }).toEqual({ rel, mode: folder ? '700' : '600' });
      }
    }
  });

  it('refuses a manifest naming anything but the dump and the store files, before touching the target', async () => {
    const out = path.join(work, `allow-list-${randomBytes(3).toString('hex')}`);
    expect((await script(['backup', '--out', out], envFor(w.t.db.name, w.t.composition.config.dataDir))).code).toBe(0);
    const manifest = JSON.parse(readFileSync(path.join(out, 'manifest.json'), 'utf8')) as { database: { dump: { path: string; sha256: string; bytes: number } }; files: { path: string; sha256: string; bytes: number }[] };
    // A session key an attacker chose, with a checksum that matches it: restoring it would let them sign sessions.
    const key = Buffer.from('attacker-chosen-session-key-0123456789abcdef\n');
    mkdirSync(path.join(out, 'secrets'));
    writeFileSync(path.join(out, 'secrets', 'jwt-secret'), key);
    const entry = (p: string) => ({ path: p, sha256: sha256(key), bytes: key.length });
    const cases: [string, typeof manifest][] = [
      ['secrets/', { ...manifest, files: [...manifest.files, entry('secrets/jwt-secret')] }],
      ['an absolute path', { ...manifest, files: [...manifest.files, entry(path.join(out, 'secrets', 'jwt-secret'))] }],
      ['a store folder with a name of its own', { ...manifest, files: [...manifest.files, entry('objects/ab/jwt-secret')] }],
      ['another file as the dump', { ...manifest, database: { ...manifest.database, dump: entry('secrets/jwt-secret') } }],
    ];
    const target = await emptyDatabase();
    const dataDir = path.join(work, `allow-list-data-${randomBytes(3).toString('hex')}`);
    try {
      for (const [what, tampered] of cases) {
        writeFileSync(path.join(out, 'manifest.json'), JSON.stringify(tampered));
        const res = await script(['restore', '--from', out], envFor(target.name, dataDir));
        expect({ what, code: res.code }).toEqual({ what, code: 1 });
        expect(res.stderr).toMatch(/^backup: error: manifest\.json: .*(is not a file a backup writes|the dump must be database\.sql)/);
        const tables = (await target.knex('information_schema.tables').where({ table_schema: target.name }).count({ n: '*' })) as { n: number }[];
        expect(Number(tables[0].n)).toBe(0);
        expect(existsSync(path.join(dataDir, 'secrets'))).toBe(false);
        expect(existsSync(path.join(dataDir, 'objects'))).toBe(false);
      }
    } finally {
      await target.destroy();
    }
  });

  it('refuses a backup holding a symbolic link, even one to the very bytes the manifest names', async () => {
    const out = path.join(work, `linked-${randomBytes(3).toString('hex')}`);
    expect((await script(['backup', '--out', out], envFor(w.t.db.name, w.t.composition.config.dataDir))).code).toBe(0);
    const manifest = JSON.parse(readFileSync(path.join(out, 'manifest.json'), 'utf8')) as { files: { path: string }[] };
    const victim = manifest.files.find((f) => f.path.startsWith('objects/'))!.path;
    const elsewhere = path.join(work, `elsewhere-${randomBytes(3).toString('hex')}`);
    cpSync(path.join(out, 'objects'), elsewhere, { recursive: true });

    const target = await emptyDatabase();
    const dataDir = path.join(work, `linked-data-${randomBytes(3).toString('hex')}`);
    try {
      // A file that is a link to an identical copy outside the backup, then the whole objects folder as a link.
      unlinkSync(path.join(out, victim));
      symlinkSync(path.join(elsewhere, path.relative('objects', victim)), path.join(out, victim));
      const fileLink = await script(['restore', '--from', out], envFor(target.name, dataDir));
      expect(fileLink.code).toBe(1);
      expect(fileLink.stderr).toBe(`backup: error: backup: ${victim} is a symbolic link; a backup holds only plain files and folders\n`);

      rmSync(path.join(out, 'objects'), { recursive: true });
      symlinkSync(elsewhere, path.join(out, 'objects'));
      expect(lstatSync(path.join(out, 'objects')).isSymbolicLink()).toBe(true);
      const folderLink = await script(['restore', '--from', out], envFor(target.name, dataDir));
      expect(folderLink.code).toBe(1);
      expect(folderLink.stderr).toBe('backup: error: backup: objects is a symbolic link; a backup holds only plain files and folders\n');

      const tables = (await target.knex('information_schema.tables').where({ table_schema: target.name }).count({ n: '*' })) as { n: number }[];
      expect(Number(tables[0].n)).toBe(0);
      expect(existsSync(path.join(dataDir, 'objects'))).toBe(false);
    } finally {
      await target.destroy();
    }
  });

  it('refuses to restore into a DATA_DIR whose store folder is a link elsewhere, before touching the database', async () => {
    const out = path.join(work, `into-link-${randomBytes(3).toString('hex')}`);
    expect((await script(['backup', '--out', out], envFor(w.t.db.name, w.t.composition.config.dataDir))).code).toBe(0);
    const dataDir = path.join(work, `into-link-data-${randomBytes(3).toString('hex')}`);
    const elsewhere = path.join(work, `into-link-elsewhere-${randomBytes(3).toString('hex')}`);
    mkdirSync(dataDir);
    mkdirSync(elsewhere);
    symlinkSync(elsewhere, path.join(dataDir, 'objects'));
    const target = await emptyDatabase();
    try {
      const res = await script(['restore', '--from', out], envFor(target.name, dataDir));
      expect(res.code).toBe(1);
      expect(res.stderr).toBe('backup: error: DATA_DIR: objects is a symbolic link; a backup holds only plain files and folders\n');
      const tables = (await target.knex('information_schema.tables').where({ table_schema: target.name }).count({ n: '*' })) as { n: number }[];
      expect(Number(tables[0].n)).toBe(0);
      expect(readdirSync(elsewhere)).toEqual([]);
    } finally {
      await target.destroy();
    }
  });
});
