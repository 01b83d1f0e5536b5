// Compact readings (schema 6, migrations/006_compact_readings.sql): how many bytes a reading costs on disk,
// how its stable id is kept, the cells that keep a session's chart quick, and the import that finds a reading
// already there without an index on its id.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { randomUUID } from 'node:crypto';
import { Store } from '../../main/store/store';
import { exportBundleText, importBundle } from '../../main/store/bundles';
import { sessionSeries } from '../../main/store/series';
import { uidFromDb, uidToDb } from '../../main/store/uid';
import { connectionOf } from '../../main/store/connection';
import { tempDb } from '../helpers/tmp';

function seed(store: Store, serial = 'C-001') {
  const d = store.createDesign({ name: `Compact ${serial}`, notes: '' });
  const r = store.createRevision({ designId: d.id, name: 'A', changes: '' });
  const u = store.createUnit({ revisionId: r.id, serial, buildDate: '', builder: '', notes: '' });
  return store.createSession({
    unitId: u.id,
    receiver: { name: 'rx', source: 'sim', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
    path: [{ kind: 'pad', db: 40 }],
    carrierHz: 7.1e6,
    toneHz: 1000,
    txPepDbm: 30,
    rxPepDbm: -10,
    operator: '',
    notes: '',
    trims: [
      { key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
      { key: 'B', label: 'Balance C', unit: 'turns', min: 0, max: 10 },
    ],
  });
}

/** A bench-like reading: fractional levels (a real receiver's), trimmers moved now and then. */
function reading(sessionId: string, i: number, t0 = 1.77e12) {
  const y = -51.37 + 3 * Math.sin(i / 100);
  return {
    sessionId,
    t: t0 + i * 40,
    freqHz: 7.1e6,
    role: (i % 50 === 0 ? 'upper' : 'carrier') as 'upper' | 'carrier',
    raw: Math.round(y * 100) / 100,
    dbmRx: Math.round((y - 0.31) * 100) / 100,
    dbmDut: Math.round((y + 39.69) * 100) / 100,
    uDb: 0.52 + (i % 7) * 0.013,
    settled: i % 3 !== 0,
    kept: i % 6000 === 0,
    floorLimited: i % 97 === 0,
    overload: false,
    trims: { A: Math.round((3 + ((Math.floor(i / 15000) * 0.37) % 4)) * 1000) / 1000, B: 4.21 },
    calibration: null,
    path: [{ kind: 'pad', db: 40 }],
  };
}

function bytesPerReading(store: Store): { table: number; indexes: number; total: number; n: number } {
  const db = connectionOf(store);
  const n = (db.prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number }).n;
  const size = (names: string[]) =>
    (
      db
        .prepare(`SELECT SUM(pgsize) AS b FROM dbstat WHERE name IN (${names.map(() => '?').join(',')})`)
        .get(...names) as { b: number }
    ).b;
  const table = size(['readings']);
  const indexes = size(['readings_session', 'readings_kept']);
  return { table: table / n, indexes: indexes / n, total: (table + indexes) / n, n };
}

describe('compact readings (schema 6)', () => {
  it('keeps a bench reading within 120 bytes on disk, its indexes included', () => {
    const db = tempDb();
    const store = new Store(db.file);
    try {
      const s = seed(store);
      for (let k = 0; k < 40; k++)
        store.addReadings(Array.from({ length: 1000 }, (_, j) => reading(s.id, k * 1000 + j)));
      const b = bytesPerReading(store);
      assert.equal(b.n, 40_000);
      // The target; schema 5 took 271 bytes for the same reading (test/bench/longrun.bench.ts).
      assert.ok(b.total <= 120, `a reading takes ${b.total.toFixed(1)} bytes (table ${b.table.toFixed(1)})`);
      // Every reading reads back as it was stored.
      const back = store.readings(s.id);
      assert.equal(back.length, 40_000);
      const want = reading(s.id, 12_345);
      const got = back[12_345];
      for (const k of ['t', 'freqHz', 'role', 'raw', 'dbmRx', 'dbmDut', 'uDb', 'trims'] as const)
        assert.deepEqual(got[k], want[k], k);
      assert.equal(got.floorLimited, want.floorLimited);
      assert.equal(got.settled, want.settled);
    } finally {
      store.close();
      db.cleanup();
    }
  });

  it('keeps a UUID as its 16 bytes and any other id as its text, and reads both back exactly', () => {
    const u = randomUUID();
    const stored = uidToDb(u);
    assert.ok(Buffer.isBuffer(stored) && stored.length === 16);
    assert.equal(uidFromDb(stored), u);
    for (const other of ['uid-7', u.toUpperCase(), `{${u}}`, 'x'.repeat(64)]) {
      assert.equal(uidToDb(other), other);
      assert.equal(uidFromDb(other), other);
    }
    assert.throws(() => uidFromDb(Buffer.alloc(15)), /15 bytes/);
  });

  it('counts every reading in its cells, also readings an import brings, and charts a session from them', () => {
    const db = tempDb();
    const other = tempDb();
    const store = new Store(db.file);
    const there = new Store(other.file);
    try {
      const s = seed(store);
      // Two bench days' worth of spacing in few readings: the chart then comes from the cells.
      const n = 105_000;
      for (let k = 0; k < n / 5_000; k++)
        store.addReadings(Array.from({ length: 5_000 }, (_, j) => reading(s.id, k * 5_000 + j)));
      const conn = connectionOf(store);
      const cells = conn.prepare('SELECT SUM(n) AS n, SUM(floor) AS f FROM reading_cells').get() as {
        n: number;
        f: number;
      };
      assert.equal(cells.n, n);
      assert.equal(cells.f, Array.from({ length: n }, (_, i) => i).filter((i) => i % 97 === 0).length);
      const listed = store.listSessions().find((x) => x.id === s.id)!;
      assert.equal(listed.readings, n);
      // The whole session from the cells: the same count, minimum and maximum as every reading gives.
      const series = sessionSeries(store, { sessionId: s.id, buckets: 500 });
      const all = store.readings(s.id);
      assert.equal(series.total, n);
      const lo = all.reduce((m, r) => Math.min(m, r.dbmDut), Infinity);
      const hi = all.reduce((m, r) => Math.max(m, r.dbmDut), -Infinity);
      assert.equal(Math.min(...series.buckets.map((b) => b.min)), lo);
      assert.equal(Math.max(...series.buckets.map((b) => b.max)), hi);
      const upper = sessionSeries(store, { sessionId: s.id, buckets: 500, role: 'upper' });
      assert.equal(upper.total, all.filter((r) => r.role === 'upper').length);
      // A later reading is added to the grid already built.
      store.addReading(reading(s.id, n));
      assert.equal(sessionSeries(store, { sessionId: s.id, buckets: 500 }).total, n + 1);

      // A bundle carries the ids as text and brings them back into another database; a second import finds
      // every reading already there (by session and time, then id) and adds nothing.
      const text = exportBundleText(store);
      const first = importBundle(there, text);
      assert.equal(first.added.readings, n + 1);
      const again = importBundle(there, text);
      assert.equal(again.added.readings, 0);
      assert.equal(again.unchanged.readings, n + 1);
      const ids = (st: Store) =>
        (
          connectionOf(st).prepare('SELECT uid FROM readings_wide ORDER BY t_ms, uid').all() as {
            uid: string;
          }[]
        ).map((r) => r.uid);
      assert.deepEqual(ids(there), ids(store));
      assert.equal(
        (connectionOf(there).prepare('SELECT SUM(n) AS n FROM reading_cells').get() as { n: number }).n,
        n + 1,
      );
    } finally {
      store.close();
      there.close();
      db.cleanup();
      other.cleanup();
    }
  });
});
