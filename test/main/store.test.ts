import { describe, it, beforeEach, afterEach } from 'node:test';
import assert from 'node:assert/strict';
import { Store } from '../../main/store/store';
import { loadMigrations, openDb, schemaVersion } from '../../main/store/db';
import { BenchError } from '../../app/errors';
import { tempDb } from '../helpers/tmp';
import { connectionOf } from '../../main/store/connection';

function seed(store: Store) {
  const d = store.createDesign({ name: 'Test design', notes: '' });
  const r = store.createRevision({ designId: d.id, name: 'A', changes: 'first' });
  const u = store.createUnit({ revisionId: r.id, serial: 'T-001', buildDate: '', builder: '', notes: '' });
  const s = store.createSession({
    unitId: u.id,
    receiver: { name: 'rx', source: 'sim', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
    path: [{ kind: 'pad', db: 20 }],
    carrierHz: 7.1e6,
    toneHz: 1000,
    txPepDbm: 30,
    rxPepDbm: 10,
    operator: 'op',
    notes: '',
    trims: [{ key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 }],
  });
  return { d, r, u, s };
}

const reading = (sessionId: string, t: number, dbm: number) => ({
  sessionId,
  t,
  freqHz: 7.1e6,
  role: 'carrier' as const,
  raw: dbm + 73,
  dbmRx: dbm,
  dbmDut: dbm + 20,
  uDb: 1,
  settled: true,
  kept: t % 2 === 0,
  floorLimited: false,
  overload: false,
  trims: { A: t / 10 },
  calibration: { name: 'cal' },
  path: [{ kind: 'pad', db: 20 }],
});

describe('Store', () => {
  let db: ReturnType<typeof tempDb>;
  let store: Store;
  beforeEach(() => {
    db = tempDb();
    store = new Store(db.file);
  });
  afterEach(() => {
    store.close();
    db.cleanup();
  });

  it('opens in WAL mode and records every migration applied', () => {
    assert.equal(connectionOf(store).pragma('journal_mode', { simple: true }), 'wal');
    assert.equal(schemaVersion(connectionOf(store)), Math.max(...loadMigrations().map((m) => m.version)));
    const rows = connectionOf(store)
      .prepare('SELECT version FROM schema_migrations ORDER BY version')
      .all() as {
      version: number;
    }[];
    assert.deepEqual(
      rows.map((r) => r.version),
      loadMigrations().map((m) => m.version),
    );
  });

  it('builds the design → revision → unit tree', () => {
    const { d, r, u } = seed(store);
    const tree = store.tree();
    assert.equal(tree.length, 1);
    assert.equal(tree[0].id, d.id);
    assert.equal(tree[0].revisions[0].id, r.id);
    assert.equal(tree[0].revisions[0].units[0].id, u.id);
  });

  it('refuses a duplicate serial with ECONFLICT naming the field, and writes nothing', () => {
    const { r } = seed(store);
    assert.throws(
      () => store.createUnit({ revisionId: r.id, serial: 'T-001', buildDate: '', builder: '', notes: '' }),
      (e: unknown) => e instanceof BenchError && e.code === 'ECONFLICT' && e.field === 'serial',
    );
    assert.equal(
      (connectionOf(store).prepare('SELECT COUNT(*) AS n FROM units').get() as { n: number }).n,
      1,
    );
  });

  it('refuses a session for an unknown unit with ENOTFOUND', () => {
    assert.throws(
      () =>
        store.createSession({
          unitId: 'nope',
          receiver: { name: 'rx', source: 'sim', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
          path: [],
          carrierHz: 1,
          toneHz: 1,
          txPepDbm: 0,
          rxPepDbm: 0,
          operator: '',
          notes: '',
          trims: [],
        }),
      (e: unknown) => e instanceof BenchError && e.code === 'ENOTFOUND' && e.field === 'unitId',
    );
  });

  it('stores readings with the calibration and path they were corrected with', () => {
    const { s } = seed(store);
    const r = store.addReading(reading(s.id, 2, -90));
    assert.ok(r.id > 0);
    const back = store.readings(s.id);
    assert.equal(back.length, 1);
    assert.equal(back[0].dbmDut, -70);
    assert.deepEqual(back[0].trims, { A: 0.2 });
    assert.deepEqual(store.correctionOf(r.id), {
      calibration: { name: 'cal' },
      path: [{ kind: 'pad', db: 20 }],
    });
  });

  it('shares one corrections row among readings corrected the same way', () => {
    const { s } = seed(store);
    store.addReadings([1, 2, 3, 4].map((t) => reading(s.id, t, -90 - t)));
    assert.equal(
      (connectionOf(store).prepare('SELECT COUNT(*) AS n FROM corrections').get() as { n: number }).n,
      1,
    );
    assert.equal(store.readings(s.id, { keptOnly: true }).length, 2);
  });

  it('rolls back a batch with one bad reading: nothing half-written', () => {
    const { s } = seed(store);
    const bad = { ...reading(s.id, 3, -90), dbmDut: NaN };
    assert.throws(() => store.addReadings([reading(s.id, 1, -90), bad]), /reading\.dbmDut/);
    assert.equal(store.readings(s.id).length, 0);
  });

  it('summarises sessions with the deepest kept carrier', () => {
    const { s } = seed(store);
    store.addReadings([2, 4, 5].map((t) => reading(s.id, t, -100 - t)));
    const [sum] = store.listSessions();
    assert.equal(sum.readings, 3);
    assert.equal(sum.kept, 2);
    assert.equal(sum.bestCarrierDbm, -84); // t = 4: dbmRx -104 + 20 dB pad
  });

  it('records gaps and closes them', () => {
    const { s } = seed(store);
    const g = store.addGap(s.id, 1000, 'EIO', 'link lost');
    store.closeGap(g, 2500);
    assert.deepEqual(store.gaps(s.id), [
      { id: g, tStartMs: 1000, tEndMs: 2500, code: 'EIO', message: 'link lost' },
    ]);
  });

  it('refuses a database from a newer schema version and leaves it unchanged', () => {
    connectionOf(store)
      .prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (99, ?, ?)')
      .run('future', 'x');
    store.close();
    assert.throws(
      () => openDb(db.file),
      (e: unknown) => e instanceof BenchError && e.code === 'ECONFLICT' && /newer/.test(e.message),
    );
    store = new Store(':memory:');
  });
});
