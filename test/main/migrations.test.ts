// Migrations with numbers reserved per feature: a higher number may land before a lower one, and each
// migration is applied once, whatever order they arrived in.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { BenchError } from '../../app/errors';
import { loadMigrations, openDb } from '../../main/store/db';
import { tempDir } from '../helpers/tmp';

function versions(file: string, dir: string): number[] {
  const db = openDb(file, { migrations: loadMigrations(dir) });
  const rows = db.prepare('SELECT version FROM schema_migrations ORDER BY version').all() as {
    version: number;
  }[];
  db.close();
  return rows.map((r) => r.version);
}

describe('db.migrate()', () => {
  it('applies a migration whose lower number arrives after a higher one, once', () => {
    const t = tempDir();
    try {
      const dir = join(t.dir, 'm');
      const file = join(t.dir, 'x.db');
      mkdirSync(dir);
      writeFileSync(join(dir, '001_a.sql'), 'CREATE TABLE a (x INTEGER);');
      writeFileSync(join(dir, '003_c.sql'), 'CREATE TABLE c (x INTEGER);');
      assert.deepEqual(versions(file, dir), [1, 3]);
      writeFileSync(join(dir, '002_b.sql'), 'CREATE TABLE b (x INTEGER);');
      assert.deepEqual(versions(file, dir), [1, 2, 3]);
      // Opening again applies nothing twice (a second CREATE TABLE would throw).
      assert.deepEqual(versions(file, dir), [1, 2, 3]);
    } finally {
      t.cleanup();
    }
  });

  it('refuses a database that has a schema change this build does not know, and changes nothing', () => {
    const t = tempDir();
    try {
      const dir = join(t.dir, 'm');
      const file = join(t.dir, 'x.db');
      mkdirSync(dir);
      writeFileSync(join(dir, '001_a.sql'), 'CREATE TABLE a (x INTEGER);');
      writeFileSync(join(dir, '002_b.sql'), 'CREATE TABLE b (x INTEGER);');
      writeFileSync(join(dir, '003_c.sql'), 'CREATE TABLE c (x INTEGER);');
      assert.deepEqual(versions(file, dir), [1, 2, 3]);
      rmSync(join(dir, '002_b.sql'));
      assert.throws(
        () => versions(file, dir),
        (e: unknown) =>
          e instanceof BenchError && e.code === 'ECONFLICT' && /version 2, made by a newer/.test(e.message),
      );
    } finally {
      t.cleanup();
    }
  });

  it('rejects two migrations with the same number', () => {
    const t = tempDir();
    try {
      writeFileSync(join(t.dir, '001_a.sql'), '');
      writeFileSync(join(t.dir, '001_b.sql'), '');
      assert.throws(() => loadMigrations(t.dir), /version 1 twice/);
    } finally {
      t.cleanup();
    }
  });
});
