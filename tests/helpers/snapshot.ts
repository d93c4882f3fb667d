// The whole observable state of a test studio, for "a refused request changed nothing": every row of every
// table of its database (contents, not counts) and the files of its content store.
//
// Two depths, one shape:
// - take(): for every row of every table its primary key and an MD5 of all its columns, in one statement.
//   Values are QUOTE'd, so NULL, the string 'NULL', binary bytes and doubles each have one exact text (MariaDB
//   writes doubles in their shortest round-trip form, checked on 10.11). Rows are matched by key, so their
//   order does not matter, and a difference names the rows added, removed or changed.
// - fingerprint(): CHECKSUM TABLE … EXTENDED over every table, for callers that check thousands of requests.
//   Checked on MariaDB 10.11 before relying on it: it reads every row (InnoDB keeps no live checksum) and
//   sums a CRC32 per row, so the same rows inserted in a different order give the same value, while a changed
//   value, a value moved between two rows, a changed BLOB, JSON or DATETIME(3) fraction each change it. It is
//   32 bits per table and says only which table changed; tables with volatile columns are read row by row
//   instead, since CHECKSUM TABLE cannot leave a column out.
// Both cost a few milliseconds on a test world; the fingerprint about a third of a full snapshot.
import { readdir } from 'node:fs/promises';
import path from 'node:path';
import type { Knex } from 'knex';

/** Row hashes of one table, keyed by primary key (parts joined by '/'). */
type TableState = Map<string, string>;

export interface Snapshot {
  tables: Map<string, TableState>;
  /** Content-store files, as paths relative to the data folder; empty when no folder was given. */
  files: Set<string>;
}

export interface SnapshotOptions {
  knex: Knex;
  /** The database to read (information_schema lists every database on the server). */
  database: string;
  /** The app's DATA_DIR: its content-store folders are listed too. */
  dataDir?: string;
  /**
   * Columns that change by design on requests the server refuses, as `table.column`, or `table.*` for a
   * table that does (a log of failed sign-ins, say). Each entry needs a reason beside it where it is passed.
   */
  volatileColumns?: readonly string[];
}

export interface Snapshotter {
  /** Every row's key and hash: differences name rows. */
  take(): Promise<Snapshot>;
  /** One checksum per table (row hashes for tables with volatile columns): differences name tables. */
  fingerprint(): Promise<Snapshot>;
}

/** The key under which a fingerprint keeps a table's checksum. */
const wholeTable = '(checksum)';

/** Folders of DATA_DIR that hold stored objects (server/storage/content-store.ts). */
const storeFolders = ['objects', 'thumbnails'];
/** Names the store writes and renames within one operation; they never outlive it. */
const transient = /^\.(tmp|sweep)-/;

interface TablePlan {
  name: string;
  /** Columns hashed, in ordinal order. */
  columns: string[];
  /** Primary-key columns (all columns when the table has none). */
  key: string[];
}

/** Reads the schema once; every take() or fingerprint() after that is one statement and one listing of the store. */
export async function snapshotter(options: SnapshotOptions): Promise<Snapshotter> {
  const { knex, database } = options;
  const volatile = new Set(options.volatileColumns ?? []);
  const columns = (await knex('information_schema.columns')
    .where({ table_schema: database })
    .orderBy([{ column: 'table_name' }, { column: 'ordinal_position' }])
    .select('table_name as t', 'column_name as c')) as { t: string; c: string }[];
  const keys = (await knex('information_schema.key_column_usage')
    .where({ table_schema: database, constraint_name: 'PRIMARY' })
    .orderBy([{ column: 'table_name' }, { column: 'ordinal_position' }])
    .select('table_name as t', 'column_name as c')) as { t: string; c: string }[];
  const baseTables = new Set(
    ((await knex('information_schema.tables').where({ table_schema: database, table_type: 'BASE TABLE' }).select('table_name as t')) as { t: string }[]).map(
      (r) => r.t,
    ),
  );
  for (const v of volatile) {
    const [t, c] = v.split('.');
    if (!columns.some((col) => col.t === t && (c === '*' || col.c === c))) throw new Error(`volatile column ${v} is not in ${database}`);
  }
  const plans: TablePlan[] = [...baseTables]
    .filter((name) => !volatile.has(`${name}.*`))
    .sort()
    .map((name) => {
      const all = columns.filter((c) => c.t === name).map((c) => c.c);
      const key = keys.filter((k) => k.t === name).map((k) => k.c);
      return { name, columns: all.filter((c) => !volatile.has(`${name}.${c}`)), key: key.length > 0 ? key : all };
    });

  // One statement for the whole database: per row its table, its key and an MD5 of its columns. QUOTE gives
  // every value one unambiguous text (strings quoted and escaped, NULL as the bare word NULL), so two rows
  // feed the same text only if their values are equal.
  const rowHashes = (of: TablePlan[]) => ({
    sql: of
      .map((p) => `SELECT ? AS t, CONCAT_WS('/', ${p.key.map(() => '??').join(', ')}) AS k, MD5(CONCAT_WS(',', ${p.columns.map(() => 'QUOTE(??)').join(', ')})) AS h FROM ??`)
      .join(' UNION ALL '),
    bindings: of.flatMap((p) => [p.name, ...p.key, ...p.columns, p.name]),
  });
  const everyRow = rowHashes(plans);
  const partial = plans.filter((p) => [...volatile].some((v) => v.startsWith(`${p.name}.`)));
  const partialRows = partial.length > 0 ? rowHashes(partial) : null;
  const whole = plans.filter((p) => !partial.includes(p));
  const checksumSql = `CHECKSUM TABLE ${whole.map(() => '??').join(', ')} EXTENDED`;
  const store = () => (options.dataDir ? listStore(options.dataDir) : Promise.resolve(new Set<string>()));

  async function readRows(query: { sql: string; bindings: string[] }, into: Map<string, TableState>): Promise<void> {
    if (!query.sql) return;
    const [rows] = (await knex.raw(query.sql, query.bindings)) as unknown as [{ t: string; k: string; h: string }[]];
    for (const r of rows) into.get(r.t)!.set(String(r.k), String(r.h));
  }

  return {
    async take() {
      const tables = new Map<string, TableState>(plans.map((p) => [p.name, new Map()]));
      const [, files] = await Promise.all([readRows(everyRow, tables), store()]);
      return { tables, files };
    },
    async fingerprint() {
      const tables = new Map<string, TableState>(plans.map((p) => [p.name, new Map()]));
      const [[sums], , files] = await Promise.all([
        whole.length > 0
          ? (knex.raw(checksumSql, whole.map((p) => p.name)) as unknown as Promise<[{ Table: string; Checksum: unknown }[]]>)
          : Promise.resolve([[]] as [{ Table: string; Checksum: unknown }[]]),
        partialRows ? readRows(partialRows, tables) : Promise.resolve(),
        store(),
      ]);
      // Rows name tables as database.table.
      for (const r of sums) tables.get(r.Table.slice(r.Table.indexOf('.') + 1))!.set(wholeTable, String(r.Checksum));
      return { tables, files };
    },
  };
}

/**
 * Names only: the store names a file by the SHA-256 of its bytes, so a name stands for its contents, and
 * listing without a stat per file keeps a snapshot cheap.
 */
async function listStore(dataDir: string): Promise<Set<string>> {
  const listed = await Promise.all(
    storeFolders.map(async (folder) => {
      const entries = await readdir(path.join(dataDir, folder), { recursive: true, withFileTypes: true }).catch((err: NodeJS.ErrnoException) => {
        if (err.code === 'ENOENT') return [];
        throw err;
      });
      return entries
        .filter((e) => e.isFile() && !transient.test(e.name))
        .map((e) => path.relative(dataDir, path.join(e.parentPath, e.name)).split(path.sep).join('/'));
    }),
  );
  return new Set(listed.flat().sort());
}

/**
 * What differs between two snapshots, one line per table or file, with the keys of the rows added, removed
 * or changed (at most a few per table); empty when they are equal.
 */
export function snapshotDiff(before: Snapshot, after: Snapshot): string[] {
  const out: string[] = [];
  const names = [...new Set([...before.tables.keys(), ...after.tables.keys()])].sort();
  for (const name of names) {
    const a = before.tables.get(name) ?? new Map<string, string>();
    const b = after.tables.get(name) ?? new Map<string, string>();
    const added = [...b.keys()].filter((k) => !a.has(k));
    const removed = [...a.keys()].filter((k) => !b.has(k));
    const changed = [...a.keys()].filter((k) => b.has(k) && b.get(k) !== a.get(k));
    if (a.has(wholeTable) || b.has(wholeTable)) {
      if (a.get(wholeTable) !== b.get(wholeTable)) out.push(`${name}: contents changed (CHECKSUM TABLE)`);
      continue;
    }
    const parts = [
      added.length > 0 ? `added ${few(added)}` : '',
      removed.length > 0 ? `removed ${few(removed)}` : '',
      changed.length > 0 ? `changed ${few(changed)}` : '',
    ].filter(Boolean);
    if (parts.length > 0) out.push(`${name}: ${parts.join('; ')}`);
  }
  for (const file of after.files) if (!before.files.has(file)) out.push(`file ${file}: added`);
  for (const file of before.files) if (!after.files.has(file)) out.push(`file ${file}: removed`);
  return out;
}

const few = (keys: string[]) => `row ${keys.slice(0, 5).join(', ')}${keys.length > 5 ? ` and ${keys.length - 5} more` : ''}`;
