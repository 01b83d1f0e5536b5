// Runs in Node (main process, web server, CLI). Opens the database (WAL) and applies the numbered
// SQL files in migrations/ in order, recording each in schema_migrations, each in its own transaction.
// An existing database is copied aside before it is upgraded; one from a newer Nullbench is refused.
import Database from 'better-sqlite3';
import { existsSync, mkdirSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { BenchError } from '../../app/errors';
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
  readonly?: boolean;
  migrations?: Migration[];
  /** Told where the copy made before an upgrade of an existing database went. */
  onBackup?: (path: string) => void;
}

export function openDb(file: string, opts: OpenOptions = {}): Db {
  if (file !== ':memory:') mkdirSync(dirname(resolve(file)), { recursive: true });
  const nativeBinding = opts.nativeBinding ?? process.env.NULLBENCH_SQLITE_BINDING ?? undefined;
  const db = new Database(file, { readonly: opts.readonly ?? false, nativeBinding });
  db.pragma('journal_mode = WAL');
  // FULL: a reading acknowledged to the user has reached the disk, even on power loss.
  db.pragma('synchronous = FULL');
  db.pragma('foreign_keys = ON');
  db.pragma('busy_timeout = 5000');
  if (!opts.readonly) {
    const migrations = opts.migrations ?? loadMigrations();
    try {
      const applied = appliedVersions(db);
      const known = new Set(migrations.map((m) => m.version));
      const pending = migrations.filter((m) => !applied.has(m.version));
      // An existing database about to change gets a copy first (one from a newer build is refused below).
      if (
        file !== ':memory:' &&
        applied.size > 0 &&
        pending.length > 0 &&
        [...applied].every((v) => known.has(v))
      ) {
        const latest = migrations[migrations.length - 1].version;
        const copy = backupBeforeUpgrade(db, file, schemaVersion(db), latest);
        opts.onBackup?.(copy);
      }
      migrate(db, migrations);
    } catch (e) {
      db.close();
      throw e;
    }
  }
  return db;
}

/**
 * Copies the database (a consistent, compacted copy through VACUUM INTO, WAL content included) next to it
 * before an upgrade: "nullbench.db.v2-before-v4.bak". A failed copy stops the upgrade; nothing is changed.
 */
export function backupBeforeUpgrade(db: Db, file: string, from: number, to: number): string {
  const base = `${resolve(file)}.v${from}-before-v${to}`;
  let target = `${base}.bak`;
  if (existsSync(target)) target = `${base}.${new Date().toISOString().replace(/[:.]/g, '-')}.bak`;
  try {
    db.prepare('VACUUM INTO ?').run(target);
  } catch (e) {
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
  for (const m of migrations) {
    if (applied.has(m.version)) continue;
    db.transaction(() => {
      db.exec(m.sql);
      db.prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)').run(
        m.version,
        m.name,
        new Date().toISOString(),
      );
    })();
  }
  return latest;
}
