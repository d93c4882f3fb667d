// Backups of a Cellwright installation: the app database (a consistent logical dump) and the content-addressed
// object store, listed in a manifest with the SHA-256 of every file.
//   node --import tsx scripts/backup.ts backup --out DIR
//   node --import tsx scripts/backup.ts restore --from DIR
// Database and DATA_DIR come from the same environment the server reads (DB_HOST, DB_PORT, DB_NAME, DB_USER,
// DB_PASSWORD, DATA_DIR). Errors are one line on stderr and a non-zero exit; nothing is left half-written.
import { spawn } from 'node:child_process';
import { createHash, randomBytes } from 'node:crypto';
import { createReadStream, createWriteStream, existsSync } from 'node:fs';
import { copyFile, mkdir, open, readdir, readFile, rename, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { loadConfig, type Config } from '../server/config';
import { createDatabase } from '../server/db';
import { contentStoreLock } from '../server/storage/content-store';

const MANIFEST = 'manifest.json';
const DUMP = 'database.sql';
// Only the content-addressed folders: they are immutable by hash, and the store sweep is held off (by the
// content store lock) from the dump to the last copy, so every row of the dump finds its file. secrets/ (the
// session key) is left out on purpose: a backup must not carry it.
const STORE_FOLDERS = ['objects', 'thumbnails'];

interface ManifestFile {
  path: string;
  sha256: string;
  bytes: number;
}
interface Manifest {
  format: 'cellwright-backup';
  version: 1;
  createdAt: string;
  database: { name: string; dump: ManifestFile };
  files: ManifestFile[];
}

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
      const sink = createWriteStream(io.stdoutTo);
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
  await mkdir(temp);
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
    await writeFile(path.join(temp, MANIFEST), JSON.stringify(manifest, null, 2) + '\n');
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
  await fsyncPath(dumpFile);
  const files: ManifestFile[] = [];
  for (const folder of STORE_FOLDERS) {
    for (const rel of await filesUnder(path.join(config.dataDir, folder))) {
      const from = path.join(config.dataDir, folder, rel);
      const to = path.join(temp, folder, rel);
      await mkdir(path.dirname(to), { recursive: true });
      await copyFile(from, to);
      const { sha256, bytes } = await sha256File(to);
      // An object is named by its hash: a copy that disagrees was damaged on disk before the backup.
      if (folder === 'objects' && path.basename(rel) !== sha256) throw new BackupError(`object ${rel} does not match its SHA-256 (${sha256}); the store is damaged`);
      files.push({ path: path.join(folder, rel).split(path.sep).join('/'), sha256, bytes });
    }
  }
  return { dumpFile, files };
}

async function readManifest(from: string): Promise<Manifest> {
  let manifest: Manifest;
  try {
    manifest = JSON.parse(await readFile(path.join(from, MANIFEST), 'utf8')) as Manifest;
  } catch (err) {
    throw new BackupError(`${from}: no readable ${MANIFEST} (${(err as Error).message})`);
  }
  if (manifest?.format !== 'cellwright-backup' || manifest.version !== 1 || !Array.isArray(manifest.files)) {
    throw new BackupError(`${from}: ${MANIFEST} is not a Cellwright backup manifest`);
  }
  for (const f of [manifest.database.dump, ...manifest.files]) {
    // Manifest paths name files inside the backup; anything climbing out is refused.
    if (path.isAbsolute(f.path) || f.path.split('/').includes('..')) throw new BackupError(`${MANIFEST}: unsafe path ${JSON.stringify(f.path)}`);
  }
  return manifest;
}

/** Every file the manifest lists, under `root`, with the SHA-256 and size it records. */
async function verifyFiles(root: string, files: ManifestFile[], where: string): Promise<void> {
  for (const f of files) {
    const file = path.join(root, f.path);
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
    if ((await filesUnder(path.join(config.dataDir, folder))).length > 0) throw new BackupError(`${path.join(config.dataDir, folder)} is not empty; restore only into an empty DATA_DIR`);
  }

  await runTool('mariadb', [...connectionArgs(config), config.db.database], config, { stdinFrom: path.join(source, manifest.database.dump.path) });
  for (const f of manifest.files) {
    const to = path.join(config.dataDir, f.path);
    await mkdir(path.dirname(to), { recursive: true });
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

