// Bundles: export -> import -> export gives the same bytes; importing twice adds nothing; a bad file is
// refused naming the line or the field, and writes nothing.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { exportBundle, exportBundleText, importBundle } from '../../main/store/bundles';
import { Records } from '../../main/store/records';
import { Service } from '../../main/service';
import { Store } from '../../main/store/store';
import { demoDb } from '../helpers/demo';
import { tempDb } from '../helpers/tmp';
import { connectionOf } from '../../main/store/connection';

const TABLES = [
  'designs',
  'revisions',
  'units',
  'sessions',
  'readings',
  'corrections',
  'gaps',
  'limit_sets',
  'unit_sheets',
  'session_emission',
];

function counts(store: Store): Record<string, number> {
  return Object.fromEntries(
    TABLES.map((t) => [
      t,
      (connectionOf(store).prepare(`SELECT COUNT(*) AS n FROM ${t}`).get() as { n: number }).n,
    ]),
  );
}

function rejects(fn: () => unknown, field: string | RegExp, message?: RegExp): BenchError {
  let caught: unknown;
  try {
    fn();
  } catch (e) {
    caught = e;
  }
  assert.ok(caught instanceof BenchError, `expected a BenchError, got ${String(caught)}`);
  assert.equal(caught.code, 'EINVAL', caught.message);
  if (typeof field === 'string') assert.equal(caught.field, field, caught.message);
  else assert.match(caught.field ?? '', field, caught.message);
  if (message) assert.match(caught.message, message);
  return caught;
}

/** The demo database's bundle text, and the database (for cleanup). */
async function demoBundle() {
  const d = await demoDb();
  const src = new Store(d.file);
  const text = exportBundleText(src);
  src.close();
  return { d, text };
}

/** A demo database with a user limit set, sheet settings and an SSB session flag, so every list is filled. */
async function fullDemo() {
  const d = await demoDb();
  const store = new Store(d.file);
  const rec = new Records(store);
  const set = rec.saveLimitSet({
    name: 'Kit target',
    source: 'our own',
    rules: [{ metric: 'balance', maxDb: 1 }],
  });
  const unit = rec.unitBySerial('HD40-0102');
  rec.saveSheetSettings({
    unitId: unit.id,
    limitSetIds: [set.id, 'preset:us-97.307d'],
    reference: 'tone',
    notes: 'kit, "as built"',
  });
  const s = store.listSessions(unit.id)[0];
  rec.setEmission(s.id, 'usb');
  store.addGap(s.id, 1000, 'ETIMEOUT', 'no answer');
  return { d, store, rec };
}

describe('records.bundle', () => {
  it('export → import into an empty database → export gives the same bytes', async () => {
    const { d, store } = await fullDemo();
    const t = tempDb();
    const other = new Store(t.file);
    try {
      const first = exportBundleText(store);
      const b = exportBundle(store);
      assert.equal(b.designs.length, 1);
      assert.equal(b.units.length, 6);
      assert.ok(b.readings.length > 1000);
      assert.equal(b.limitSets.length, 1);
      assert.equal(b.sheets.length, 1);
      assert.equal(b.gaps.length, 1);
      assert.equal(b.sessions.filter((s) => s.emission === 'usb').length, 1);
      const sum = importBundle(other, first);
      assert.equal(sum.added.readings, b.readings.length);
      assert.equal(sum.added.sessions, 6);
      assert.equal(exportBundleText(other), first);
      assert.deepEqual(counts(other), counts(store));
    } finally {
      other.close();
      t.cleanup();
      store.close();
      d.cleanup();
    }
  });

  it('importing the same bundle twice adds nothing the second time', async () => {
    const { d, store } = await fullDemo();
    const t = tempDb();
    const other = new Store(t.file);
    try {
      const text = exportBundleText(store);
      importBundle(other, text);
      const before = counts(other);
      const again = importBundle(other, text);
      assert.deepEqual(Object.values(again.added), [0, 0, 0, 0, 0, 0, 0, 0]);
      assert.equal(again.unchanged.readings, exportBundle(store).readings.length);
      assert.deepEqual(again.keptLocal, []);
      assert.deepEqual(counts(other), before);
      // Into the database it came from: nothing new either.
      const home = importBundle(store, text);
      assert.deepEqual(Object.values(home.added), [0, 0, 0, 0, 0, 0, 0, 0]);
    } finally {
      other.close();
      t.cleanup();
      store.close();
      d.cleanup();
    }
  });

  it('exports one design alone and merges a same-named design of another bench without a duplicate', async () => {
    const d = await demoDb();
    const store = new Store(d.file);
    const t = tempDb();
    const other = new Store(t.file);
    try {
      const heron = new Records(store).findDesign('Heron DSB-40');
      store.createDesign({ name: 'Other rig', notes: '' });
      const one = exportBundle(store, heron.id);
      assert.equal(one.scope.design, 'Heron DSB-40');
      assert.deepEqual(
        one.designs.map((x) => x.name),
        ['Heron DSB-40'],
      );
      // The other bench started the same design (and revision R1) on its own: new IDs, same names.
      const mine = other.createDesign({ name: 'Heron DSB-40', notes: 'local' });
      other.createRevision({ designId: mine.id, name: 'R1', changes: '' });
      const sum = importBundle(other, exportBundleText(store, heron.id));
      assert.equal(sum.added.designs, 0);
      assert.equal(sum.added.revisions, 1, 'R2 is new there');
      assert.equal(sum.added.units, 6);
      assert.match(sum.matchedByName.join('\n'), /design "Heron DSB-40" matched by name/);
      const tree = other.tree();
      assert.equal(tree.length, 1);
      assert.deepEqual(
        tree[0].revisions.map((r) => [r.name, r.units.length]),
        [
          ['R1', 3],
          ['R2', 3],
        ],
      );
    } finally {
      other.close();
      t.cleanup();
      store.close();
      d.cleanup();
    }
  });

  it('keeps a record that was changed here and says so', async () => {
    const d = await demoDb();
    const store = new Store(d.file);
    try {
      const text = exportBundleText(store);
      const rec = new Records(store);
      const u = rec.unitBySerial('HD40-0201');
      rec.updateUnit({ unitId: u.id, notes: 'replaced the ring diodes' });
      const sum = importBundle(store, text);
      assert.match(sum.keptLocal.join('\n'), /unit HD40-0201 differs/);
      assert.equal(rec.unitBySerial('HD40-0201').notes, 'replaced the ring diodes');
    } finally {
      store.close();
      d.cleanup();
    }
  });

  it('refuses a corrupt bundle naming the line or the field, and writes nothing', async () => {
    const { d, text } = await demoBundle();
    const t = tempDb();
    const target = new Store(t.file);
    target.createDesign({ name: 'Already here', notes: '' });
    const before = counts(target);
    try {
      const b = JSON.parse(text);
      const edit = (f: (x: typeof b) => void) => {
        const c = JSON.parse(text);
        f(c);
        return JSON.stringify(c);
      };
      // A field of the wrong type, deep in the file (the last reading): everything before it is fine.
      const last = b.readings.length - 1;
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[last].dbmDut = 'minus forty')),
          ),
        `readings[${last}].dbmDut`,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[3].role = 'carier')),
          ),
        'readings[3].role',
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.units[1].serial = '')),
          ),
        'units[1].serial',
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.sessions[0].path[1].db = -20)),
          ),
        /^sessions\[0\]\.path\[1\]\.db$/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[2].sessionId = 'nowhere')),
          ),
        'readings[2].sessionId',
        /neither in the bundle nor/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.corrections[0].path[0].couplingDb = 31)),
          ),
        'corrections[0].digest',
        /does not match/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[1].uid = c.readings[0].uid)),
          ),
        'readings[1].uid',
        /twice/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.sessions[0].colour = 'red')),
          ),
        'sessions[0]',
        /unknown key "colour"/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.version = 7)),
          ),
        'version',
        /newer/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.format = 'something-else')),
          ),
        'format',
      );
      // Cut off in the middle: the line where the file ends.
      const cut = text.slice(0, Math.floor(text.length / 2));
      const e = rejects(() => importBundle(target, cut), /^line \d+, column \d+$/, /ends early/);
      assert.equal(Number(/^line (\d+)/.exec(e.field!)![1]), cut.split('\n').length);
      // A stray character on line 3.
      const lines = text.split('\n');
      lines[2] = lines[2].replace('"version": 1', '"version": 1}');
      rejects(() => importBundle(target, lines.join('\n')), /^line 3, column \d+$/);
      assert.deepEqual(counts(target), before, 'nothing was written');
    } finally {
      target.close();
      t.cleanup();
      d.cleanup();
    }
  });

  it('checks every value at the door as live input is checked: bounded levels, real and ordered dates, safe set-ups', async () => {
    const { d, text } = await demoBundle();
    const t = tempDb();
    const target = new Store(t.file);
    const before = counts(target);
    const edit = (f: (x: Record<string, Record<string, unknown>[]>) => void) => {
      const c = JSON.parse(text);
      f(c);
      return JSON.stringify(c);
    };
    try {
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[0].dbmDut = 1e308)),
          ),
        'readings[0].dbmDut',
        /at most \+100 dBm/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[0].dbmRx = -1e6)),
          ),
        'readings[0].dbmRx',
        /at least -300 dBm/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[0].uDb = 1e9)),
          ),
        'readings[0].uDb',
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.readings[0].t = -5)),
          ),
        'readings[0].t',
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.sessions[0].startedAt = '2026-13-45T10:00:00.000Z')),
          ),
        'sessions[0].startedAt',
        /ISO 8601 UTC/,
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.designs[0].createdAt = 'yesterday')),
          ),
        'designs[0].createdAt',
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => (c.units[0].buildDate = '2026-02-30')),
          ),
        'units[0].buildDate',
      );
      rejects(
        () =>
          importBundle(
            target,
            edit((c) => {
              c.sessions[0].endedAt = '2026-01-01T00:00:00.000Z';
            }),
          ),
        'sessions[0].endedAt',
        /before it starts/,
      );
      // 70 dBm PEP through a 30 dB coupler and a 20 dB pad is +20 dBm into a receiver rated 10 dBm.
      let unsafe: unknown;
      try {
        importBundle(
          target,
          edit((c) => (c.sessions[0].txPepDbm = 70)),
        );
      } catch (e) {
        unsafe = e;
      }
      assert.ok(unsafe instanceof BenchError && unsafe.code === 'EUNSAFE', String(unsafe));
      assert.equal(unsafe.field, 'sessions[0].path');
      assert.match(unsafe.message, /refused: .*rated maximum of 10 dBm/);
      assert.deepEqual(counts(target), before, 'nothing was written');
    } finally {
      target.close();
      t.cleanup();
      d.cleanup();
    }
  });

  it('rolls everything back when a write fails half-way', async () => {
    const d = await demoDb();
    const src = new Store(d.file);
    const text = exportBundleText(src);
    src.close();
    const t = tempDb();
    const target = new Store(t.file);
    try {
      // A trigger that fails on the 100th reading stands in for a disk or constraint failure mid-import.
      connectionOf(target)
        .exec(`CREATE TRIGGER fail_late BEFORE INSERT ON readings WHEN (SELECT COUNT(*) FROM readings) >= 100
        BEGIN SELECT RAISE(ABORT, 'disk full (simulated)'); END`);
      const before = counts(target);
      assert.throws(() => importBundle(target, text), /disk full/);
      assert.deepEqual(counts(target), before);
    } finally {
      target.close();
      t.cleanup();
      d.cleanup();
    }
  });

  it('points an imported sheet at the local limit set of the same name, and refuses one that is nowhere', async () => {
    const { d, store } = await fullDemo();
    const t = tempDb();
    const other = new Store(t.file);
    try {
      const text = exportBundleText(store);
      const mine = new Records(other).saveLimitSet({
        name: 'Kit target',
        rules: [{ metric: 'balance', maxDb: 2 }],
      });
      const sum = importBundle(other, text);
      assert.match(sum.keptLocal.join('\n'), /a limit set named "Kit target" is already here/);
      const unit = new Records(other).unitBySerial('HD40-0102');
      assert.deepEqual(new Records(other).sheetSettings(unit.id).limitSetIds, [mine.id, 'preset:us-97.307d']);
      const bad = JSON.parse(text);
      bad.limitSets = [];
      const t2 = tempDb();
      const third = new Store(t2.file);
      try {
        rejects(() => importBundle(third, JSON.stringify(bad)), 'sheets[0].limitSetIds[0]', /limit set/);
      } finally {
        third.close();
        t2.cleanup();
      }
    } finally {
      other.close();
      t.cleanup();
      store.close();
      d.cleanup();
    }
  });

  it('takes a large bundle in parts through the service, in any order, and imports it once whole', async () => {
    const d = await demoDb();
    const src = new Store(d.file);
    const text = exportBundleText(src);
    src.close();
    const t = tempDb();
    const store = new Store(t.file);
    const service = new Service({ store, mode: 'web' });
    try {
      const n = Math.max(3, Math.ceil(text.length / 900_000));
      const size = Math.ceil(text.length / n);
      const parts = Array.from({ length: n }, (_, i) => text.slice(i * size, (i + 1) * size));
      const send = (part: number) =>
        service.invoke('importBundlePart', { uploadId: 'test-upload-1', part, parts: n, text: parts[part] });
      // Out of order: the last part first, then all but the second.
      for (const i of [n - 1, ...parts.keys()].filter((i, k, a) => i !== 1 && a.indexOf(i) === k))
        assert.equal(await send(i), null);
      assert.equal(counts(store).readings, 0, 'nothing is written before the last part');
      const sum = await send(1);
      assert.ok(sum && sum.added.units === 6);
      const wrong = await service.call('importBundlePart', {
        uploadId: 'test-upload-2',
        part: 3,
        parts: 3,
        text: 'x',
      });
      assert.equal(!wrong.ok && wrong.field, 'part');
    } finally {
      await service.close();
      store.close();
      t.cleanup();
      d.cleanup();
    }
  });
});
