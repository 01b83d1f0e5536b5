// Our files only: another program's SQLite file, a file that is not SQLite, a damaged database and one from a
// newer Nullbench are refused with their path, and left byte for byte as they were (journal mode included);
// a database made before the application id existed is recognised and marked; the upgrade backup only ever
// appears under its documented name whole.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { BenchError } from '../../app/errors';
import { APPLICATION_ID, loadMigrations, openDb } from '../../main/store/db';
import { Store } from '../../main/store/store';
import { tempDir } from '../helpers/tmp';
import { runCli } from '../helpers/cli';

const digest = (file: string) => createHash('sha256').update(readFileSync(file)).digest('hex');

/** Every file in the folder with its digest: what "left exactly as it was" means. */
const snapshot = (dir: string) => Object.fromEntries(readdirSync(dir).map((f) => [f, digest(join(dir, f))]));

function refused(fn: () => unknown, code: string, message: RegExp): void {
  assert.throws(fn, (e: unknown) => {
    assert.ok(e instanceof BenchError, `not a BenchError: ${String(e)}`);
    assert.equal(e.code, code, e.message);
    assert.match(e.message, message);
    return true;
  });
}

describe('only our own database files are opened', () => {
  it("refuses another program's SQLite file by its path, adding nothing and leaving its journal mode", async () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'address-book.db');
      const other = new Database(file);
      other.exec("CREATE TABLE contacts (name TEXT); INSERT INTO contacts VALUES ('a neighbour')");
      other.close();
      const before = snapshot(tmp.dir);
      refused(() => new Store(file), 'ECONFLICT', /address-book\.db is not a Nullbench database.*contacts/);
      const r = await runCli(['units', '--db', file]);
      assert.notEqual(r.code, 0);
      assert.match(r.err, /address-book\.db is not a Nullbench database/);
      assert.deepEqual(snapshot(tmp.dir), before, 'the file or its folder changed');
      const look = new Database(file, { readonly: true });
      assert.equal(look.pragma('journal_mode', { simple: true }), 'delete');
      assert.equal(
        (look.prepare("SELECT COUNT(*) AS n FROM sqlite_master WHERE type = 'table'").get() as { n: number })
          .n,
        1,
      );
      look.close();
    } finally {
      tmp.cleanup();
    }
  });

  it('refuses a file that is not SQLite at all, showing how it starts', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'notes.db');
      writeFileSync(file, 'carrier -52 dBm at 4.4 turns\n');
      const before = snapshot(tmp.dir);
      refused(
        () => new Store(file),
        'EINVAL',
        /notes\.db is not a Nullbench database \(not a SQLite file.*63 61 72/,
      );
      assert.deepEqual(snapshot(tmp.dir), before);
    } finally {
      tmp.cleanup();
    }
  });

  it('marks a new database with our application id, and recognises and marks one made before the mark', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'bench.db');
      const s = new Store(file);
      s.createDesign({ name: 'Marsh Hen 40', notes: '' });
      s.close();
      const conn = new Database(file);
      assert.equal(conn.pragma('application_id', { simple: true }), APPLICATION_ID);
      conn.pragma('application_id = 0'); // as every database was before the mark
      conn.close();
      const again = new Store(file);
      again.close();
      const look = new Database(file, { readonly: true });
      assert.equal(look.pragma('application_id', { simple: true }), APPLICATION_ID);
      assert.equal((look.prepare('SELECT COUNT(*) AS n FROM designs').get() as { n: number }).n, 1);
      look.close();
    } finally {
      tmp.cleanup();
    }
  });

  it('refuses a newer database in rollback-journal mode without switching it to WAL', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'newer.db');
      new Store(file).close();
      const conn = new Database(file);
      conn.pragma('journal_mode = DELETE');
      conn
        .prepare("INSERT INTO schema_migrations (version, name, applied_at) VALUES (99, 'future', 'x')")
        .run();
      conn.close();
      const before = snapshot(tmp.dir);
      refused(
        () => new Store(file),
        'ECONFLICT',
        /newer\.db has schema version 99, made by a newer Nullbench/,
      );
      assert.deepEqual(
        snapshot(tmp.dir),
        before,
        'the file or its folder changed (a -wal or -shm file appeared?)',
      );
      const look = new Database(file, { readonly: true });
      assert.equal(look.pragma('journal_mode', { simple: true }), 'delete');
      look.close();
    } finally {
      tmp.cleanup();
    }
  });

  it('refuses a database damaged in the middle, before anything is appended, naming it and the check', async () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'damaged.db');
      const s = new Store(file);
      s.tx(() => {
        for (let i = 0; i < 400; i++) s.createDesign({ name: `Board ${i}`, notes: 'x'.repeat(400) });
      });
      s.close();
      const bytes = readFileSync(file);
      const page = 4096;
      const pages = bytes.length / page;
      assert.ok(pages > 20, `only ${pages} pages`);
      // One page in the middle overwritten, as a bad sector or a stray write would leave it.
      bytes.fill(0xa5, page * Math.floor(pages / 2), page * (Math.floor(pages / 2) + 1));
      writeFileSync(file, bytes);
      const before = snapshot(tmp.dir);
      refused(() => new Store(file), 'EIO', /damaged\.db is damaged \(.+\); nothing was written/);
      const r = await runCli(['add', '--db', file, '--design', 'After the damage']);
      assert.notEqual(r.code, 0);
      assert.match(r.err, /damaged\.db is damaged/);
      assert.deepEqual(snapshot(tmp.dir), before);
    } finally {
      tmp.cleanup();
    }
  });

  it('writes the upgrade backup under a temporary name and renames it only when it checks out', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'old.db');
      const all = loadMigrations();
      openDb(file, { migrations: all.slice(0, 1) }).close();
      // What a kill during an earlier copy would have left: a partial file, never the documented name.
      const partial = `${file}.v1-before-v${all[all.length - 1].version}.bak.partial`;
      writeFileSync(partial, '');
      let told = '';
      new Store(file, { onBackup: (p) => (told = p) }).close();
      assert.ok(told.endsWith(`old.db.v1-before-v${all[all.length - 1].version}.bak`), told);
      assert.ok(!existsSync(partial), 'the partial copy was left behind');
      const copy = new Database(told, { readonly: true });
      assert.equal(copy.pragma('quick_check', { simple: true }), 'ok');
      assert.equal(
        (copy.prepare('SELECT MAX(version) AS v FROM schema_migrations').get() as { v: number }).v,
        1,
      );
      copy.close();
    } finally {
      tmp.cleanup();
    }
  });
});
