// Backups of a Cellwright installation: the app database (a consistent logical dump) and the content-addressed
// object store, listed in a manifest with the SHA-256 of every file.
//   node --import tsx scripts/backup.ts backup --out DIR
//   node --import tsx scripts/backup.ts restore --from DIR
// Database and DATA_DIR come from the same environment the server reads (DB_HOST, DB_PORT, DB_NAME, DB_USER,
// DB_PASSWORD, DATA_DIR). Errors are one line on stderr and a non-zero exit; nothing is left half-written.
// A backup holds every password hash and every image: its folders are 0700 and its files 0600 whatever the umask.
import { spawn } from 'node:child_process';
import { createHash, randomBytes } from 'node:crypto';
import { createReadStream, createWriteStream, existsSync } from 'node:fs';
import { chmod, copyFile, lstat, mkdir, open, readdir, readFile, rename, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { z } from 'zod';
import { loadConfig, type Config } from '../server/config';
import { createDatabase } from '../server/db';
import { contentStoreLock } from '../server/storage/content-store';

const MANIFEST = 'manifest.json';
const DUMP = 'database.sql';
// Only the content-addressed folders: they are immutable by hash, and the store sweep is held off (by the
// content store lock) from the dump to the last copy, so every row of the dump finds its file. secrets/ (the
// session key) is left out on purpose: a backup must not carry it.
const STORE_FOLDERS = ['objects', 'thumbnails'];
// The only files a backup writes besides the dump and the manifest: <folder>/<first two hex>/<sha256>, as the content
// store names them (server/storage/content-store.ts). Restore writes nothing else, so secrets/ or any other path a
// manifest might name is refused, not restored.
const STORE_FILE = /^(objects|thumbnails)\/([0-9a-f]{2})\/([0-9a-f]{64})$/;
const isStoreFile = (rel: string) => {
  const m = STORE_FILE.exec(rel);
  return m !== null && m[3].startsWith(m[2]);
};
const PRIVATE_DIR = 0o700;
const PRIVATE_FILE = 0o600;

const manifestFile = z.strictObject({ path: z.string(), sha256: z.string().regex(/^[0-9a-f]{64}$/), bytes: z.int().min(0) });
const manifestSchema = z.strictObject({
  format: z.literal('cellwright-backup'),
  version: z.literal(1),
  createdAt: z.string(),
  database: z.strictObject({ name: z.string(), dump: manifestFile }),
  files: z.array(manifestFile),
});
type ManifestFile = z.infer<typeof manifestFile>;
type Manifest = z.infer<typeof manifestSchema>;

class BackupError extends Error {}

// SHA-256 via node:crypto (FIPS 180-4), streamed so large dumps never sit in memory whole.
function sha256File(file: string): Promise<{ sha256: string; bytes: number }> {
  return new Promise((resolve, reject) => {
    const hash = createHash('sha256');
    let bytes = 0;
    createReadStream(file)
      .on('data', (c: Buffer | string) => {
        const chunk = typeof c === 'string' ? Buffer.from(c) : c;
        bytes += chunk.length;
        hash.update(chunk);
      })
      .on('error', reject)
      .on('end', () => resolve({ sha256: hash.digest('hex'), bytes }));
  });
}

async function filesUnder(root: string, rel = ''): Promise<string[]> {
  const dir = path.join(root, rel);
  if (!existsSync(dir)) return [];
  const out: string[] = [];
  for (const entry of await readdir(dir, { withFileTypes: true })) {
    const child = path.join(rel, entry.name);
    if (entry.isDirectory()) out.push(...(await filesUnder(root, child)));
    // Dot-files are the store's in-flight temporaries, never objects.
    else if (entry.isFile() && !entry.name.startsWith('.')) out.push(child);
  }
  return out.sort();
}

/** mkdir's mode is masked by the umask (which may also take the owner's bits away), so the mode is set afterwards. */
async function privateDir(dir: string): Promise<void> {
  await mkdir(dir, { recursive: true, mode: PRIVATE_DIR });
  await chmod(dir, PRIVATE_DIR);
}

async function fsyncPath(p: string): Promise<void> {
  const handle = await open(p, 'r');
  try {
    await handle.sync();
  } finally {
    await handle.close();
  }
}

/** Runs a MariaDB client tool; the password goes through the environment, never the command line. */
function runTool(tool: string, args: string[], config: Config, io: { stdoutTo?: string; stdinFrom?: string }): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn(tool, args, {
      env: { ...process.env, MYSQL_PWD: config.db.password },
      stdio: [io.stdinFrom ? 'pipe' : 'ignore', io.stdoutTo ? 'pipe' : 'ignore', 'pipe'],
    });
    let stderr = '';
    child.stderr!.on('data', (c: Buffer) => (stderr += c.toString('utf8')));
    child.on('error', (err: NodeJS.ErrnoException) =>
      reject(new BackupError(err.code === 'ENOENT' ? `${tool} is not installed (Debian: apt-get install mariadb-client)` : `${tool}: ${err.message}`)),
    );
    // The output file must be flushed, not only the tool exited, before the dump counts as written.
    const written = new Promise<void>((done, fail) => {
      if (!io.stdoutTo) return done();
      const sink = createWriteStream(io.stdoutTo, { mode: PRIVATE_FILE });
      sink.on('finish', () => done()).on('error', fail);
      child.stdout!.pipe(sink);
    });
    if (io.stdinFrom) createReadStream(io.stdinFrom).pipe(child.stdin!);
    child.on('close', (code) => {
      if (code !== 0) return reject(new BackupError(`${tool} failed: ${stderr.trim().split('\n').pop() ?? `exit ${code}`}`));
      written.then(resolve, reject);
    });
  });
}

const connectionArgs = (config: Config) => ['--no-defaults', `--host=${config.db.host}`, `--port=${config.db.port}`, `--user=${config.db.user}`, '--protocol=tcp'];

export async function backup(config: Config, out: string): Promise<Manifest> {
  const target = path.resolve(out);
  if (existsSync(target)) throw new BackupError(`${target} already exists; choose a new folder`);
  await mkdir(path.dirname(target), { recursive: true });
  // Built beside the target and renamed at the end, so a crash never leaves something that looks like a backup.
  const temp = path.join(path.dirname(target), `.${path.basename(target)}.partial-${randomBytes(4).toString('hex')}`);
  await mkdir(temp, { mode: PRIVATE_DIR });
  await chmod(temp, PRIVATE_DIR);
  const db = createDatabase(config.db, { min: 0, max: 1 });
  try {
    const held = await db.withNamedLock(contentStoreLock, 120, () => dumpAndCopy(config, temp));
    if (!held) throw new BackupError('the content store has been busy (a sweep) for two minutes; try again');
    const { dumpFile, files } = held.value;
    const dump = await sha256File(dumpFile);
    const manifest: Manifest = {
      format: 'cellwright-backup',
      version: 1,
      createdAt: new Date().toISOString(),
      database: { name: config.db.database, dump: { path: DUMP, ...dump } },
      files,
    };
    await writeFile(path.join(temp, MANIFEST), JSON.stringify(manifest, null, 2) + '\n', { mode: PRIVATE_FILE });
    await chmod(path.join(temp, MANIFEST), PRIVATE_FILE);
    await fsyncPath(path.join(temp, MANIFEST));
    await rename(temp, target);
    await fsyncPath(path.dirname(target));
    return manifest;
  } catch (err) {
    await rm(temp, { recursive: true, force: true });
    throw err;
  } finally {
    await db.destroy();
  }
}

/** The dump, then a copy of every stored file; called while the content store lock is held. */
async function dumpAndCopy(config: Config, temp: string): Promise<{ dumpFile: string; files: ManifestFile[] }> {
  const dumpFile = path.join(temp, DUMP);
  // --single-transaction: one consistent InnoDB snapshot without locking writers; --hex-blob keeps codewords exact.
  await runTool('mariadb-dump', [...connectionArgs(config), '--single-transaction', '--routines', '--triggers', '--hex-blob', '--skip-dump-date', config.db.database], config, {
    stdoutTo: dumpFile,
  });
  await chmod(dumpFile, PRIVATE_FILE);
  await fsyncPath(dumpFile);
  const files: ManifestFile[] = [];
  for (const folder of STORE_FOLDERS) {
    for (const rel of await filesUnder(path.join(config.dataDir, folder))) {
      const stored = path.join(folder, rel).split(path.sep).join('/');
      // Anything the content store did not name is not the store's, and restore would refuse it.
      if (!isStoreFile(stored)) continue;
      const from = path.join(config.dataDir, folder, rel);
      const to = path.join(temp, folder, rel);
      await privateDir(path.join(temp, folder));
      await privateDir(path.dirname(to));
      // copyFile carries the source's mode over; the copy is made private before anything is read from it.
      await copyFile(from, to);
      await chmod(to, PRIVATE_FILE);
      const { sha256, bytes } = await sha256File(to);
      // An object is named by its hash: a copy that disagrees was damaged on disk before the backup.
      if (folder === 'objects' && path.basename(rel) !== sha256) throw new BackupError(`object ${rel} does not match its SHA-256 (${sha256}); the store is damaged`);
      files.push({ path: stored, sha256, bytes });
    }
  }
  return { dumpFile, files };
}

/**
 * Refuses a symbolic link anywhere on `rel` under `root` (a link in a backup could make restore read, or write, a
 * file outside the folders it means to); the last part must be a regular file (`file`) or a folder. Missing parts
 * are left to the caller.
 */
async function refuseLinks(root: string, rel: string, where: string, last: 'file' | 'folder'): Promise<void> {
  const parts = rel.split('/');
  for (let i = 1; i <= parts.length; i++) {
    const sub = parts.slice(0, i).join('/');
    const info = await lstat(path.join(root, sub)).catch(() => null);
    if (!info) return;
    if (info.isSymbolicLink()) throw new BackupError(`${where}: ${sub} is a symbolic link; a backup holds only plain files and folders`);
    const want = i < parts.length || last === 'folder' ? 'folder' : 'file';
    if (want === 'folder' ? !info.isDirectory() : !info.isFile()) throw new BackupError(`${where}: ${sub} is not a plain ${want}`);
  }
}

async function readManifest(from: string): Promise<Manifest> {
  await refuseLinks(from, MANIFEST, 'backup', 'file');
  let value: unknown;
  try {
    value = JSON.parse(await readFile(path.join(from, MANIFEST), 'utf8'));
  } catch (err) {
    throw new BackupError(`${from}: no readable ${MANIFEST} (${(err as Error).message})`);
  }
  const parsed = manifestSchema.safeParse(value);
  if (!parsed.success) throw new BackupError(`${from}: ${MANIFEST} is not a Cellwright backup manifest`);
  const manifest = parsed.data;
  // An allow-list, not a deny-list of '..': restore writes the dump and the store's own files, nothing else.
  if (manifest.database.dump.path !== DUMP) {
    throw new BackupError(`${MANIFEST}: the dump must be ${DUMP}, not ${JSON.stringify(manifest.database.dump.path)}`);
  }
  for (const f of manifest.files) {
    if (!isStoreFile(f.path)) {
      throw new BackupError(`${MANIFEST}: ${JSON.stringify(f.path)} is not a file a backup writes (only objects/ and thumbnails/ files named by their SHA-256)`);
    }
  }
  return manifest;
}

/** Every file the manifest lists, under `root`, with the SHA-256 and size it records. */
async function verifyFiles(root: string, files: ManifestFile[], where: string): Promise<void> {
  for (const f of files) {
    const file = path.join(root, f.path);
    await refuseLinks(root, f.path, where, 'file');
    if (!existsSync(file)) throw new BackupError(`${where}: ${f.path} is missing`);
    const { sha256, bytes } = await sha256File(file);
    if (sha256 !== f.sha256 || bytes !== f.bytes) throw new BackupError(`${where}: ${f.path} does not match its checksum in the manifest`);
  }
}

export async function restore(config: Config, from: string): Promise<{ files: number; tables: number }> {
  const source = path.resolve(from);
  const manifest = await readManifest(source);
  await verifyFiles(source, [manifest.database.dump, ...manifest.files], 'backup');

  const db = createDatabase(config.db, { min: 0, max: 2 });
  try {
    const tables = (await db.knex('information_schema.tables').where({ table_schema: config.db.database }).count({ n: '*' })) as { n: number }[];
    if (Number(tables[0].n) > 0) throw new BackupError(`database ${config.db.database} is not empty (${tables[0].n} tables); restore only into an empty one`);
  } finally {
    await db.destroy();
  }
  for (const folder of STORE_FOLDERS) {
    // The folders restore writes into must be the DATA_DIR's own, not links to somewhere else.
    await refuseLinks(config.dataDir, folder, 'DATA_DIR', 'folder');
    if ((await filesUnder(path.join(config.dataDir, folder))).length > 0) throw new BackupError(`${path.join(config.dataDir, folder)} is not empty; restore only into an empty DATA_DIR`);
  }
  // Before anything is written: no folder a file will go to may be a link (an empty store can still hold one).
  for (const dir of new Set(manifest.files.map((f) => path.posix.dirname(f.path)))) await refuseLinks(config.dataDir, dir, 'DATA_DIR', 'folder');

  await runTool('mariadb', [...connectionArgs(config), config.db.database], config, { stdinFrom: path.join(source, manifest.database.dump.path) });
  for (const f of manifest.files) {
    const to = path.join(config.dataDir, f.path);
    await mkdir(path.dirname(to), { recursive: true });
    await refuseLinks(config.dataDir, path.posix.dirname(f.path), 'DATA_DIR', 'folder');
    const temp = path.join(path.dirname(to), `.restore-${randomBytes(4).toString('hex')}`);
    await copyFile(path.join(source, f.path), temp);
    await fsyncPath(temp);
    await rename(temp, to);
  }
  await verifyFiles(config.dataDir, manifest.files, 'restored DATA_DIR');

  // The restored rows must find their bytes: every image its object, every codebook its checksum.
  const check = createDatabase(config.db, { min: 0, max: 2 });
  try {
    const images = (await check.knex('images').select('id', 'sha256')) as { id: number; sha256: string }[];
    const have = new Set(manifest.files.filter((f) => f.path.startsWith('objects/')).map((f) => f.sha256));
    const orphan = images.find((i) => !have.has(i.sha256));
    if (orphan) throw new BackupError(`restored image ${orphan.id} has no object ${orphan.sha256} in the backup`);
    const books = (await check.knex('codebooks').select('id', 'checksum', 'codewords')) as { id: number; checksum: string; codewords: Buffer }[];
    const bad = books.find((b) => createHash('sha256').update(b.codewords).digest('hex') !== b.checksum);
    if (bad) throw new BackupError(`restored codebook ${bad.id} does not match its checksum`);
    const count = (await check.knex('information_schema.tables').where({ table_schema: config.db.database }).count({ n: '*' })) as { n: number }[];
    return { files: manifest.files.length, tables: Number(count[0].n) };
  } finally {
    await check.destroy();
  }
}

function option(argv: string[], name: string): string {
  const at = argv.indexOf(name);
  const value = at >= 0 ? argv[at + 1] : undefined;
  if (!value || value.startsWith('--')) throw new BackupError(`missing ${name} DIR`);
  return value;
}

async function main(argv: string[]): Promise<number> {
  const [command, ...rest] = argv;
  try {
    const config = loadConfig(process.env);
    if (command === 'backup') {
      const out = option(rest, '--out');
      const m = await backup(config, out);
      const bytes = m.files.reduce((s, f) => s + f.bytes, m.database.dump.bytes);
      process.stdout.write(`backed up database ${m.database.name} and ${m.files.length} files (${bytes} bytes) to ${path.resolve(out)}\n`);
      return 0;
    }
    if (command === 'restore') {
      const from = option(rest, '--from');
      const r = await restore(config, from);
      process.stdout.write(`restored ${r.tables} tables and ${r.files} files into ${config.db.database} and ${config.dataDir}; every checksum matches\n`);
      return 0;
    }
    throw new BackupError('usage: backup --out DIR | restore --from DIR');
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    process.stderr.write(`backup: error: ${message.split('\n')[0]}\n`);
    return 1;
  }
}

if (process.argv[1] && path.resolve(process.argv[1]) === path.resolve(new URL(import.meta.url).pathname)) {
  void main(process.argv.slice(2)).then((code) => process.exit(code));
}

