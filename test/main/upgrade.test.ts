// Upgrades: a database of every earlier schema version, built here from the migration files up to that
// version and filled with data, is upgraded with every row intact; a copy is made before; a failed upgrade
// changes nothing; a database from a newer Nullbench is refused and left alone.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import {
  backupBeforeUpgrade,
  loadMigrations,
  migrate,
  openDb,
  schemaVersion,
  type Db,
  type Migration,
} from '../../main/store/db';
import { Store } from '../../main/store/store';
import { tempDir } from '../helpers/tmp';
import { connectionOf } from '../../main/store/connection';

const T0 = '2026-05-02T18:00:00.000Z';

/**
 * Rows for the tables each schema version introduced, in SQL with explicit column lists (so a later
 * migration that adds columns with defaults does not break them). A migration that adds a table needs its
 * filler here: the fixture check below names the empty table.
 */
/** Canonical UUIDs, as the store makes them (the last five readings have ids a bundle may bring instead). */
const UUIDS = (i: number) =>
  `${i.toString(16).padStart(8, '0')}-9c5e-4a2b-8d1f-${'0123456789ab'.slice(0, 12)}`;

const FILLERS: Record<number, string[]> = {
  1: [
    `INSERT INTO designs (id, name, notes, created_at) VALUES ('d1', 'Kestrel 20', 'two-tone DSB kit', '${T0}')`,
    `INSERT INTO revisions (id, design_id, name, changes, created_at) VALUES ('r1', 'd1', 'B', 'ground plane', '${T0}')`,
    `INSERT INTO units (id, revision_id, serial, build_date, builder, notes, created_at)
       VALUES ('u1', 'r1', 'KS20-0007', '2026-04-30', 'evening group', 'ñ, °, Ω', '${T0}')`,
    `INSERT INTO sessions (id, unit_id, receiver_json, path_json, carrier_hz, tone_hz, tx_pep_dbm, rx_pep_dbm,
       operator, notes, trims_json, started_at, ended_at)
       VALUES ('s1', 'u1', '{"name":"rx","source":"sim","calibration":null,"bandwidthHz":500,"maxInputDbm":10}',
       '[{"kind":"pad","db":40}]', 7100000, 1000, 30, -10, 'op', '',
       '[{"key":"A","label":"Balance R","unit":"turns","min":0,"max":10}]', '${T0}', NULL)`,
    `INSERT INTO corrections (id, digest, calibration_json, path_json) VALUES (1, 'abc', '{"name":"R.1"}', '[]')`,
    ...Array.from(
      { length: 25 },
      (_, i) =>
        `INSERT INTO readings (id, uid, session_id, t_ms, freq_hz, role, raw, dbm_rx, dbm_dut, u_db, settled, kept,
           floor_limited, overload, trims_json, correction_id, note)
         VALUES (${i + 1}, '${i < 20 ? UUIDS(i) : `uid-${i}`}', 's1', ${1.77e12 + i * 40}, 7100000, '${i % 5 === 0 ? 'upper' : 'carrier'}',
           ${-20 + i}, ${-93 + i + 0.25}, ${-53 + i + 0.25}, 1.2, ${i % 2}, ${i % 7 === 0 ? 1 : 0}, 0, 0,
           '{"A":${(i / 5).toFixed(1)}}', 1, '${i === 3 ? "it''s kept" : ''}')`,
    ),
    `INSERT INTO gaps (id, session_id, t_start_ms, t_end_ms, code, message)
       VALUES (1, 's1', 1.77e12, 1.77e12 + 900, 'EIO', 'link lost')`,
  ],
  2: [
    `INSERT INTO serial_templates (name, json, created_at, updated_at)
       VALUES ('bench-meter', '{"query":"SM;"}', '${T0}', '${T0}')`,
    `INSERT INTO receiver_profiles (id, name, source, template, calibration_json, injections_json, bandwidth_hz,
       max_input_dbm, notes, created_at, updated_at)
       VALUES ('p1', 'Shack receiver', 'net:127.0.0.1:4532', NULL, NULL, '[]', 2400, 10, '', '${T0}', '${T0}')`,
    `INSERT INTO plan_runs (id, session_id, spec_json, state, message, created_at, updated_at)
       VALUES ('run1', 's1', '{"points":["carrier"]}', 'interrupted', '', '${T0}', '${T0}')`,
    `INSERT INTO plan_points (run_id, idx, role, freq_hz, state, n, dbm_rx, dbm_dut, u_db)
       VALUES ('run1', 0, 'carrier', 7100000, 'done', 4, -80, -40, 1.1)`,
    `INSERT INTO plan_point_readings (run_id, idx, reading_id) VALUES ('run1', 0, 2)`,
  ],
  3: [
    `INSERT INTO limit_sets (id, name, source, standing, notes, rules_json, created_at, updated_at)
       VALUES ('l1', 'Club kit limits', 'our own', 'user', '', '[]', '${T0}', '${T0}')`,
    `INSERT INTO session_emission (session_id, emission) VALUES ('s1', 'dsb')`,
    `INSERT INTO unit_sheets (unit_id, limit_set_ids_json, reference, session_id, notes, updated_at)
       VALUES ('u1', '["l1"]', 'tone', 's1', '', '${T0}')`,
  ],
  4: [
    `INSERT INTO access_tokens (hash, label, created_at) VALUES ('${'ab'.repeat(32)}', 'web mode', '${T0}')`,
  ],
  5: [
    `INSERT INTO session_leases (session_id, pid, host, program, taken_at, heartbeat_at)
       VALUES ('s1', 999999, 'bench-pc', 'log', '${T0}', '${T0}')`,
  ],
  6: [
    `INSERT INTO trim_sets (id, json) VALUES (900, '{"A":9.9}')`,
    `INSERT INTO readings (id, uid, session_no, t_ms, freq_hz, role, raw, dbm_rx, dbm_dut, u_db, settled, kept,
       floor_limited, overload, trims_id, correction_id, note)
       VALUES (26, unhex('00000019a5e24a2b8d1f0123456789ab'), 1, ${1.77e12 + 25 * 40}, 7100000, 'carrier', 5, -68,
         -28, 1.2, 1, 0, 0, 0, 900, 1, '')`,
  ],
};

function tables(db: Db): string[] {
  return (
    db
      .prepare(
        "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name",
      )
      .all() as { name: string }[]
  ).map((r) => r.name);
}

function hasView(db: Db, name: string): boolean {
  return !!db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'view' AND name = ?").get(name);
}

/** Every row of every table but schema_migrations, in a fixed order. */
function snapshot(db: Db): Record<string, Record<string, unknown>[]> {
  const out: Record<string, Record<string, unknown>[]> = {};
  for (const t of tables(db)) {
    if (t === 'schema_migrations') continue;
    // Schema 6 keeps readings compact (migrations/006_compact_readings.sql); its view shows them as before.
    const from = t === 'readings' && hasView(db, 'readings_wide') ? 'readings_wide' : t;
    const cols = (db.prepare(`SELECT * FROM "${from}" LIMIT 0`).columns() as { name: string }[]).map(
      (c) => `"${c.name}"`,
    );
    out[t] = db.prepare(`SELECT * FROM "${from}" ORDER BY ${cols.join(', ')}`).all() as Record<
      string,
      unknown
    >[];
  }
  return out;
}

/** A database file with exactly the migrations `list` applied, filled; returns its snapshot. */
function fixture(file: string, list: Migration[]) {
  // Each migration, then its rows: a later one may rebuild a table an earlier one filled.
  const db = openDb(file, { migrations: list.slice(0, 1) });
  try {
    list.forEach((m, i) => {
      migrate(db, list.slice(0, i + 1));
      db.transaction(() => {
        for (const sql of FILLERS[m.version] ?? []) db.exec(sql);
      })();
    });
    const snap = snapshot(db);
    for (const [t, rows] of Object.entries(snap))
      assert.ok(
        rows.length > 0,
        `table ${t} has no rows: add its filler to FILLERS in ${import.meta.filename}`,
      );
    return snap;
  } finally {
    db.close();
  }
}

function backups(dir: string): string[] {
  return readdirSync(dir)
    .filter((f) => f.endsWith('.bak'))
    .sort();
}

describe('upgrading a database', () => {
  const all = loadMigrations();
  const latest = all[all.length - 1].version;

  for (let k = 1; k < all.length; k++) {
    const version = all[k - 1].version;
    it(`upgrades a filled schema-${version} database to ${latest} with every row intact, after a backup`, () => {
      const tmp = tempDir();
      try {
        const file = join(tmp.dir, `v${version}.db`);
        const before = fixture(file, all.slice(0, k));
        let told: string | null = null;
        const store = new Store(file, { onBackup: (p) => (told = p) });
        try {
          assert.equal(schemaVersion(connectionOf(store)), latest);
          assert.equal(connectionOf(store).pragma('integrity_check', { simple: true }), 'ok');
          assert.deepEqual(connectionOf(store).pragma('foreign_key_check'), []);
          const after = snapshot(connectionOf(store));
          for (const [t, rows] of Object.entries(before)) {
            assert.ok(after[t], `table ${t} is gone after the upgrade`);
            // A later schema may add columns; every old column keeps its value.
            const old = Object.keys(rows[0]);
            const kept = after[t].map((row) => Object.fromEntries(old.map((c) => [c, row[c]])));
            assert.deepEqual(kept, rows, `rows of ${t} changed in the upgrade from schema ${version}`);
          }
          // The same data through the store's own reading path.
          const readings = store.readings('s1');
          assert.equal(readings.length, 25);
          assert.equal(readings[3].note, "it's kept");
          assert.deepEqual(store.correctionOf(1), { calibration: { name: 'R.1' }, path: [] });
        } finally {
          store.close();
        }
        // The copy made before: the old schema and the old data, a database of its own.
        const expected = `${file}.v${version}-before-v${latest}.bak`;
        assert.equal(told, expected);
        const copy = new Database(expected, { readonly: true });
        try {
          assert.equal(schemaVersion(copy), version);
          assert.deepEqual(snapshot(copy), before);
        } finally {
          copy.close();
        }
      } finally {
        tmp.cleanup();
      }
    });
  }

  it('backs up a database whose missing migration landed late (numbers reserved out of order)', () => {
    if (all.length < 3) return;
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'gap.db');
      // Everything but the second migration, as on a bench that ran a build where it had not landed yet.
      const list = all.filter((_, i) => i !== 1);
      fixture(file, list.slice(0, 1));
      openDb(file, { migrations: list }).close();
      let told: string | null = null;
      new Store(file, { onBackup: (p) => (told = p) }).close();
      assert.ok(told && existsSync(told), 'no copy before applying the late migration');
    } finally {
      tmp.cleanup();
    }
  });

  it('makes no backup for a new database or one already up to date', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'new.db');
      new Store(file).close();
      new Store(file).close();
      assert.deepEqual(backups(tmp.dir), []);
    } finally {
      tmp.cleanup();
    }
  });

  it('never overwrites an earlier backup', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'twice.db');
      fixture(file, all.slice(0, 1));
      const db = new Database(file);
      try {
        const first = backupBeforeUpgrade(db, file, 1, latest);
        const second = backupBeforeUpgrade(db, file, 1, latest);
        assert.notEqual(first, second);
        assert.equal(backups(tmp.dir).length, 2);
      } finally {
        db.close();
      }
    } finally {
      tmp.cleanup();
    }
  });

  it('stops before changing anything when the backup cannot be written', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'nocopy.db');
      fixture(file, all.slice(0, 1));
      const db = new Database(file);
      try {
        assert.throws(
          () => backupBeforeUpgrade(db, join(tmp.dir, 'no-such-folder', 'x.db'), 1, latest),
          (e: Error & { code?: string }) =>
            e.code === 'EIO' && /could not back the database up .* nothing was changed/.test(e.message),
        );
      } finally {
        db.close();
      }
    } finally {
      tmp.cleanup();
    }
  });

  it('rolls back a failing migration: the database keeps its version and data, the copy was made', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'fail.db');
      const before = fixture(file, all);
      const broken: Migration = {
        version: latest + 1,
        name: 'broken',
        sql: "CREATE TABLE half_done (x INTEGER); UPDATE readings SET note = 'touched'; INSERT INTO nowhere VALUES (1);",
      };
      assert.throws(() => openDb(file, { migrations: [...all, broken] }), /no such table: nowhere/);
      const db = new Database(file, { readonly: true });
      try {
        assert.equal(schemaVersion(db), latest);
        assert.deepEqual(snapshot(db), before);
        assert.ok(!tables(db).includes('half_done'));
      } finally {
        db.close();
      }
      assert.ok(existsSync(`${file}.v${latest}-before-v${latest + 1}.bak`));
    } finally {
      tmp.cleanup();
    }
  });

  it('refuses a database from a newer Nullbench with a clear message, makes no copy and changes nothing', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'newer.db');
      const future: Migration = {
        version: latest + 1,
        name: 'future',
        sql: 'CREATE TABLE future_things (x INTEGER); INSERT INTO future_things VALUES (1);',
      };
      const before = fixture(file, [...all, future]);
      const bytes = readFileSync(file);
      assert.throws(
        () => new Store(file),
        (e: Error & { code?: string }) =>
          e.code === 'ECONFLICT' &&
          e.message.includes(`schema version ${latest + 1}, made by a newer Nullbench`) &&
          e.message.includes('nothing was changed'),
      );
      const db = new Database(file, { readonly: true });
      try {
        assert.deepEqual(snapshot(db), before);
      } finally {
        db.close();
      }
      assert.ok(readFileSync(file).equals(bytes), 'the file changed');
      assert.deepEqual(backups(tmp.dir), []);
    } finally {
      tmp.cleanup();
    }
  });
});
