// Runs in Node (main process, web server, CLI). Opens the database (WAL) and applies the numbered
// SQL files in migrations/ in order, recording each in schema_migrations, each in its own transaction.
// Only our own, whole files are opened: another program's SQLite file, a damaged one or one from a newer
// Nullbench is refused untouched. An existing database is copied aside (verified) before it is upgraded.
import Database from 'better-sqlite3';
import {
  accessSync,
  closeSync,
  constants as fsConstants,
  existsSync,
  mkdirSync,
  openSync,
  readdirSync,
  readFileSync,
  readSync,
  renameSync,
  rmSync,
  statSync,
} from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { BenchError, storageReason } from '../../app/errors';
import { migrationsDir } from '../paths';

export type Db = Database.Database;

export interface Migration {
  version: number;
  name: string;
  sql: string;
}

/**
 * Reads migrations/NNN_name.sql, ordered by number; a duplicate number is a packaging error. Numbers are
 * reserved per feature while features are built side by side, so a higher one may land before a lower one:
 * gaps are allowed, and migrate() applies every migration not yet recorded, lowest first.
 */
export function loadMigrations(dir = migrationsDir()): Migration[] {
  const files = readdirSync(dir).filter((f) => /^\d{3}_[a-z0-9_]+\.sql$/.test(f));
  const list = files
    .map((f) => ({
      version: Number(f.slice(0, 3)),
      name: f.slice(4, -4),
      sql: readFileSync(join(dir, f), 'utf8'),
    }))
    .sort((a, b) => a.version - b.version);
  list.forEach((m, i) => {
    if (m.version < 1)
      throw new Error(`migrations: version numbers start at 1, found ${m.version} (${m.name})`);
    if (i > 0 && m.version === list[i - 1].version)
      throw new Error(`migrations: version ${m.version} twice (${list[i - 1].name}, ${m.name})`);
  });
  return list;
}

export interface OpenOptions {
  /** Path to the better-sqlite3 native binding (the Electron shell passes its own ABI build). */
  nativeBinding?: string;
  /** Open for reading only: nothing in the file or beside it is changed, on read-only media too. */
  readonly?: boolean;
  migrations?: Migration[];
  /** Told where the copy made before an upgrade of an existing database went. */
  onBackup?: (path: string) => void;
}

/** How long a write waits for another program's write transaction to end, ms. */
export const BUSY_TIMEOUT_MS = 20_000;

/** SQLite's application id marking a database as Nullbench's ("NBEN"), set when the schema is first made. */
export const APPLICATION_ID = 0x4e42454e;
const SQLITE_MAGIC = 'SQLite format 3\0';

/** The first 16 bytes of a file, or null when it is empty or absent. Names the file and the reason on error. */
function fileHead(file: string): Buffer | null {
  if (!existsSync(file)) return null;
  try {
    const fd = openSync(file, 'r');
    try {
      const head = Buffer.alloc(16);
      const n = readSync(fd, head, 0, 16, 0);
      return n === 0 ? null : head.subarray(0, n);
    } finally {
      closeSync(fd);
    }
  } catch (e) {
    throw ioError(file, e, 'read');
  }
}

/** A damaged database, refused with what found the damage and what the user can do. */
function damaged(where: string, detail: string): BenchError {
  return new BenchError(
    'EIO',
    `${where} is damaged (${detail}); nothing was written to it. Restore its latest backup (a .bak file ` +
      'beside it) or copy it aside and start a new database',
    'database',
  );
}

/** An open or I/O failure as a BenchError that names the file and the system's reason. */
export function ioError(file: string, e: unknown, doing = 'open'): BenchError {
  if (e instanceof BenchError) return e;
  const err = e as NodeJS.ErrnoException & { code?: string };
  const code = String(err.code ?? '');
  if (code.startsWith('SQLITE_CORRUPT') || code === 'SQLITE_NOTADB')
    return damaged(resolve(file), err.message);
  const reason = storageReason(code) ?? '';
  let where = '';
  if (code.startsWith('SQLITE_CANTOPEN') || code === 'ENOENT' || code === 'EACCES') {
    const folder = dirname(resolve(file));
    let near = folder;
    while (!existsSync(near) && dirname(near) !== near) near = dirname(near);
    let writable = true;
    try {
      accessSync(near, fsConstants.W_OK);
    } catch {
      writable = false;
    }
    if (near !== folder)
      where = `; the folder ${folder} does not exist${writable ? '' : ` and ${near} cannot be written to`}`;
    else if (!writable) where = `; the folder ${folder} cannot be written to`;
  }
  return new BenchError(
    'EIO',
    `cannot ${doing} the database ${resolve(file)}: ${reason ? `${reason} (${err.message})` : err.message}${where}`,
    'database',
  );
}

/**
 * Opens (and, unless read-only, creates and upgrades) a Nullbench database. Before anything is written it checks
 * that the file is ours: a SQLite file, marked with our application id (or an unmarked database of our own
 * schema, which is then marked), not from a newer Nullbench, and whole (SQLite's quick check). A file that fails
 * any of these is refused with its path and left exactly as it was, its journal mode included.
 */
export function openDb(file: string, opts: OpenOptions = {}): Db {
  const memory = file === ':memory:';
  const readonly = opts.readonly ?? false;
  const migrations = opts.migrations ?? loadMigrations();
  if (!memory) {
    const head = fileHead(file);
    if (head && head.toString('latin1') !== SQLITE_MAGIC)
      throw new BenchError(
        'EINVAL',
        `${resolve(file)} is not a Nullbench database (not a SQLite file at all: it starts ` +
          `${[...head.subarray(0, 8)].map((b) => b.toString(16).padStart(2, '0')).join(' ')}); nothing was changed`,
        'database',
      );
    if (readonly && !head)
      throw new BenchError(
        'ENOTFOUND',
        `no database at ${resolve(file)}: nothing has been stored there yet (nullbench add or nullbench demo ` +
          'makes one)',
        'database',
      );
    if (!readonly) {
      try {
        mkdirSync(dirname(resolve(file)), { recursive: true });
      } catch (e) {
        throw ioError(file, e, 'create the folder of');
      }
    }
  }
  const nativeBinding = opts.nativeBinding ?? process.env.NULLBENCH_SQLITE_BINDING ?? undefined;
  let db: Db | undefined;
  try {
    db = new Database(file, { readonly, fileMustExist: readonly, nativeBinding });
    db.pragma('schema_version'); // the file is really opened here, not at the constructor
  } catch (e) {
    db?.close();
    const ro = readonly && !memory && String((e as { code?: string }).code).startsWith('SQLITE_CANTOPEN');
    if (!ro) throw ioError(file, e);
    db = readOnlyCopy(file, nativeBinding, e);
  }
  try {
    // A writer waits this long for another program's write to end before it fails (a large import, a
    // migration); readers never wait in WAL mode.
    db.pragma(`busy_timeout = ${BUSY_TIMEOUT_MS}`);
    checkOurs(db, file, migrations);
    if (!readonly) {
      db.pragma('journal_mode = WAL');
      // FULL: a reading acknowledged to the user has reached the disk, even on power loss.
      db.pragma('synchronous = FULL');
    }
    db.pragma('foreign_keys = ON');
    const applied = appliedVersions(db);
    const pending = migrations.filter((m) => !applied.has(m.version));
    if (readonly) {
      if (pending.length)
        throw new BenchError(
          'ECONFLICT',
          `${resolve(file)} has schema version ${schemaVersion(db)}, older than this Nullbench's ` +
            `${migrations[migrations.length - 1].version}, and this command only reads: run a command that writes ` +
            '(nullbench add, log, serve) once to upgrade it (a copy is kept first); nothing was changed',
          'database',
        );
    } else {
      // An existing database about to change gets a copy first (one from a newer build was refused above).
      if (!memory && applied.size > 0 && pending.length > 0) {
        const latest = migrations[migrations.length - 1].version;
        const copy = backupBeforeUpgrade(db, file, schemaVersion(db), latest);
        opts.onBackup?.(copy);
      }
      migrate(db, migrations);
      if ((db.pragma('application_id', { simple: true }) as number) !== APPLICATION_ID)
        db.pragma(`application_id = ${APPLICATION_ID}`);
    }
  } catch (e) {
    db.close();
    throw memory ? e : ioError(file, e);
  }
  return db;
}

/**
 * A database on read-only media in WAL mode cannot be opened in place: SQLite needs to create its -shm file
 * beside it. With no write-ahead log pending (no -wal file, or an empty one, as a clean close leaves it), the
 * main file holds every committed row, so it is read into memory and opened there, its header marked as a
 * rollback-journal file (bytes 18-19, per SQLite's file format). A pending log cannot be read without
 * writing: refused with what to do.
 */
function readOnlyCopy(file: string, nativeBinding: string | undefined, cause: unknown): Db {
  const wal = `${file}-wal`;
  if (existsSync(wal) && statSync(wal).size > 0)
    throw new BenchError(
      'EIO',
      `cannot open the database ${resolve(file)} for reading: its folder cannot be written to and its ` +
        `write-ahead log (${wal}) still holds changes (${(cause as Error).message}); copy the .db file and its ` +
        '-wal file together to a folder that can be written to and open the copy',
      'database',
    );
  let bytes: Buffer;
  try {
    bytes = readFileSync(file);
  } catch (e) {
    throw ioError(file, e, 'read');
  }
  if (bytes.length >= 20 && bytes[18] === 2 && bytes[19] === 2) {
    bytes[18] = 1;
    bytes[19] = 1;
  }
  try {
    return new Database(bytes, { readonly: true, nativeBinding });
  } catch (e) {
    throw ioError(file, e);
  }
}

/**
 * Refuses, without writing anything, a database that is not ours, is damaged, or comes from a newer Nullbench.
 * Ours: marked with APPLICATION_ID, empty (a new file), or unmarked with our first migration recorded (made
 * before the mark existed).
 */
function checkOurs(db: Db, file: string, migrations: Migration[]): void {
  const where = file === ':memory:' ? 'the in-memory database' : resolve(file);
  const id = db.pragma('application_id', { simple: true }) as number;
  const tables = (
    db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").all() as {
      name: string;
    }[]
  ).map((r) => r.name);
  if (id !== APPLICATION_ID && tables.length > 0) {
    const first = migrations[0];
    const ourOld =
      id === 0 &&
      tables.includes('schema_migrations') &&
      first !== undefined &&
      db
        .prepare('SELECT 1 FROM schema_migrations WHERE version = ? AND name = ?')
        .get(first.version, first.name);
    if (!ourOld)
      throw new BenchError(
        'ECONFLICT',
        `${where} is not a Nullbench database: it is another program's SQLite file (application id ${id}, ` +
          `tables ${tables.slice(0, 6).join(', ')}${tables.length > 6 ? ', …' : ''}); nothing was changed. ` +
          'Give Nullbench a file of its own with --db',
        'database',
      );
  }
  const check = (db.pragma('quick_check(5)') as { quick_check: string }[])
    .map((r) => r.quick_check)
    .filter((l) => !/^\*\*\* in database/.test(l))
    .map((l) => l.replace(/\s+/g, ' ').trim())
    .join('; ');
  if (check !== 'ok') throw damaged(where, `SQLite's quick check: ${check}`);
  const known = new Set(migrations.map((m) => m.version));
  const newer = [...appliedVersions(db)].filter((v) => !known.has(v)).sort((a, b) => a - b);
  if (newer.length)
    throw new BenchError(
      'ECONFLICT',
      `${where} has schema version ${newer[newer.length - 1]}, made by a newer Nullbench than this one ` +
        `(which knows ${[...known].join(', ')}); open it with a newer Nullbench, nothing was changed`,
      'database',
    );
}

/**
 * Copies the database (a consistent, compacted copy through VACUUM INTO, WAL content included) next to it
 * before an upgrade: "nullbench.db.v2-before-v4.bak". The copy is written under a temporary name, checked
 * (SQLite's quick check, the same schema version), then renamed, so the documented name only ever holds a whole
 * copy. A failed copy stops the upgrade; nothing is changed.
 */
export function backupBeforeUpgrade(db: Db, file: string, from: number, to: number): string {
  const base = `${resolve(file)}.v${from}-before-v${to}`;
  let target = `${base}.bak`;
  if (existsSync(target)) target = `${base}.${new Date().toISOString().replace(/[:.]/g, '-')}.bak`;
  const partial = `${target}.partial`;
  try {
    rmSync(partial, { force: true });
    db.prepare('VACUUM INTO ?').run(partial);
    const copy = new Database(partial, { readonly: true, fileMustExist: true });
    try {
      const check = copy.pragma('quick_check', { simple: true });
      if (check !== 'ok') throw new Error(`the copy fails SQLite's quick check: ${String(check)}`);
      if (schemaVersion(copy) !== from)
        throw new Error(`the copy has schema ${schemaVersion(copy)}, the database ${from}`);
    } finally {
      copy.close();
    }
    renameSync(partial, target);
  } catch (e) {
    rmSync(partial, { force: true });
    throw new BenchError(
      'EIO',
      `could not back the database up to ${target} before upgrading it from schema ${from} to ${to} ` +
        `(${(e as Error).message}); nothing was changed`,
      'database',
    );
  }
  return target;
}

/** The migration versions recorded in the database (none for a new one). */
export function appliedVersions(db: Db): Set<number> {
  const row = db
    .prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name = 'schema_migrations'")
    .get();
  if (!row) return new Set();
  return new Set(
    (db.prepare('SELECT version FROM schema_migrations').all() as { version: number }[]).map(
      (r) => r.version,
    ),
  );
}

export function schemaVersion(db: Db): number {
  const row = db
    .prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name = 'schema_migrations'")
    .get() as { name: string } | undefined;
  if (!row) return 0;
  const v = db.prepare('SELECT MAX(version) AS v FROM schema_migrations').get() as { v: number | null };
  return v.v ?? 0;
}

export function migrate(db: Db, migrations: Migration[]): number {
  db.exec(
    'CREATE TABLE IF NOT EXISTS schema_migrations (version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)',
  );
  const latest = migrations.length ? migrations[migrations.length - 1].version : 0;
  const applied = new Set(
    (db.prepare('SELECT version FROM schema_migrations').all() as { version: number }[]).map(
      (r) => r.version,
    ),
  );
  const known = new Set(migrations.map((m) => m.version));
  const unknown = [...applied].filter((v) => !known.has(v)).sort((a, b) => a - b);
  if (unknown.length) {
    throw new BenchError(
      'ECONFLICT',
      `this database has schema version ${unknown[unknown.length - 1]}, made by a newer Nullbench than this ` +
        `one (which knows ${[...known].join(', ')}); open it with a newer Nullbench, nothing was changed`,
      'database',
    );
  }
  // A migration may rebuild a table that others refer to: SQLite's documented way is with foreign keys off
  // (the pragma cannot change inside a transaction), checking every reference before the commit.
  const fk = db.pragma('foreign_keys', { simple: true }) as number;
  db.pragma('foreign_keys = OFF');
  try {
    for (const m of migrations) {
      if (applied.has(m.version)) continue;
      db.transaction(() => {
        // Another program opening the same new file may have applied it while this one waited for the lock.
        if (db.prepare('SELECT 1 FROM schema_migrations WHERE version = ?').get(m.version)) return;
        db.exec(m.sql);
        const broken = db.pragma('foreign_key_check') as { table: string; rowid: number; parent: string }[];
        if (broken.length)
          throw new Error(
            `migration ${m.version} (${m.name}) left ${broken.length} broken references, the first in ` +
              `${broken[0].table} row ${broken[0].rowid} to ${broken[0].parent}; nothing was changed`,
          );
        db.prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)').run(
          m.version,
          m.name,
          new Date().toISOString(),
        );
      }).immediate();
    }
  } finally {
    db.pragma(`foreign_keys = ${fk ? 'ON' : 'OFF'}`);
  }
  return latest;
}

/**
 * Removes a database this process has just made (it did not exist when the command began) when the command
 * failed before anything was stored in it, so a refused command leaves no empty database behind. A file with
 * any design, session, reading or receiver in it is left alone.
 */
export function discardIfEmpty(file: string): boolean {
  if (file === ':memory:' || !existsSync(file)) return false;
  const db = new Database(file, { readonly: true, fileMustExist: true });
  let empty = false;
  try {
    const count = (t: string) => (db.prepare(`SELECT COUNT(*) AS n FROM ${t}`).get() as { n: number }).n;
    empty = [
      'designs',
      'sessions',
      'readings',
      'receiver_profiles',
      'serial_templates',
      'limit_sets',
      'access_tokens',
    ].every((t) => count(t) === 0);
  } catch {
    empty = false; // not our schema (or not whole): never remove it
  } finally {
    db.close();
  }
  if (!empty) return false;
  for (const f of [file, `${file}-wal`, `${file}-shm`]) rmSync(f, { force: true });
  return true;
}
