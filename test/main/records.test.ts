// Keeping records over time: editing designs, revisions and units; limit sets and sheet settings; the
// revision comparison of the demo scenario; session results through the service.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { Records } from '../../main/store/records';
import { compareDesign, loadSessionResult } from '../../main/sheet/results';
import { Service } from '../../main/service';
import { Store } from '../../main/store/store';
import { demoDb } from '../helpers/demo';

async function open() {
  const d = await demoDb();
  const store = new Store(d.file);
  const service = new Service({ store, mode: 'cli' });
  return {
    store,
    service,
    rec: new Records(store),
    async cleanup() {
      await service.close();
      store.close();
      d.cleanup();
    },
  };
}

function code(fn: () => unknown, c: string, field?: string): void {
  assert.throws(
    fn,
    (e: unknown) => e instanceof BenchError && e.code === c && (field === undefined || e.field === field),
  );
}

describe('Records', () => {
  it('renames designs and revisions, records what changed, and refuses a name already taken', async () => {
    const o = await open();
    try {
      const d = o.rec.findDesign('Heron DSB-40');
      const renamed = await o.service.invoke('updateDesign', {
        designId: d.id,
        name: 'Heron DSB-40 kit',
        notes: 'kit',
      });
      assert.equal(renamed.name, 'Heron DSB-40 kit');
      assert.equal(o.rec.findDesign(d.id).notes, 'kit');
      const r2 = o.store.tree()[0].revisions.find((r) => r.name === 'R2')!;
      await o.service.invoke('updateRevision', {
        revisionId: r2.id,
        changes: 'Ground plane; shield can on the oscillator.',
      });
      assert.equal(o.store.getRevision(r2.id).changes, 'Ground plane; shield can on the oscillator.');
      code(() => o.rec.updateRevision({ revisionId: r2.id, name: 'R1' }), 'ECONFLICT', 'name');
      o.store.createDesign({ name: 'Other', notes: '' });
      code(() => o.rec.updateDesign({ designId: d.id, name: 'Other' }), 'ECONFLICT', 'name');
      const bad = await o.service.call('updateDesign', { designId: d.id, name: '   ' });
      assert.equal(bad.ok, false);
      assert.equal(!bad.ok && bad.field, 'name');
    } finally {
      await o.cleanup();
    }
  });

  it('corrects a unit and moves it to another revision of its own design only', async () => {
    const o = await open();
    try {
      const u = o.rec.unitBySerial('HD40-0103');
      const tree = o.store.tree();
      const r2 = tree[0].revisions.find((r) => r.name === 'R2')!;
      const moved = o.rec.updateUnit({
        unitId: u.id,
        builder: 'Workshop B',
        revisionId: r2.id,
        buildDate: '2026-04-03',
      });
      assert.equal(moved.revisionId, r2.id);
      assert.equal(o.rec.unitBySerial('HD40-0103').builder, 'Workshop B');
      const other = o.store.createDesign({ name: 'Other', notes: '' });
      const ox = o.store.createRevision({ designId: other.id, name: 'A', changes: '' });
      code(() => o.rec.updateUnit({ unitId: u.id, revisionId: ox.id }), 'EINVAL', 'revisionId');
      code(() => o.rec.updateUnit({ unitId: u.id, serial: 'HD40-0101' }), 'ECONFLICT', 'serial');
      const units = o.rec.listUnits();
      assert.equal(units.length, 6);
      assert.deepEqual(Object.keys(units[0]).includes('serial'), true);
      assert.equal(units.find((x) => x.serial === 'HD40-0103')!.revision, 'R2');
    } finally {
      await o.cleanup();
    }
  });

  it('keeps user limit sets beside the presets; presets cannot be changed or deleted', async () => {
    const o = await open();
    try {
      const before = o.rec.limitSets().length;
      const s = await o.service.invoke('saveLimitSet', {
        set: { name: 'Kit target', rules: [{ metric: 'carrier', reference: 'pep', minDb: 65 }] },
      });
      assert.equal(s.standing, 'user');
      assert.equal(o.rec.limitSets().length, before + 1);
      const again = o.rec.saveLimitSet({
        id: s.id,
        name: 'Kit target',
        rules: [{ metric: 'carrier', reference: 'pep', minDb: 62 }],
      });
      assert.equal(again.rules[0].metric === 'carrier' && again.rules[0].minDb, 62);
      code(
        () =>
          o.rec.saveLimitSet({
            id: 'preset:common-practice',
            name: 'x',
            rules: [{ metric: 'balance', maxDb: 1 }],
          }),
        'EREJECTED',
      );
      code(
        () =>
          o.rec.saveLimitSet({
            name: 'Good SSB/DSB rig (common practice)',
            rules: [{ metric: 'balance', maxDb: 1 }],
          }),
        'ECONFLICT',
      );
      const bad = await o.service.call('saveLimitSet', {
        set: { name: 'x', rules: [{ metric: 'imd3', reference: 'pep', minDb: 'lots' }] },
      });
      assert.equal(!bad.ok && bad.field, 'rules[0].minDb');
      const u = o.rec.unitBySerial('HD40-0101');
      o.rec.saveSheetSettings({ unitId: u.id, limitSetIds: [s.id, 'preset:us-97.307d'] });
      code(() => o.rec.deleteLimitSet('preset:us-97.307d'), 'EREJECTED');
      o.rec.deleteLimitSet(s.id);
      assert.deepEqual(
        o.rec.sheetSettings(u.id).limitSetIds,
        ['preset:us-97.307d'],
        'taken off the sheet too',
      );
      code(() => o.rec.limitSet(s.id), 'ENOTFOUND');
    } finally {
      await o.cleanup();
    }
  });

  it('stores sheet settings per unit and refuses a session of another unit', async () => {
    const o = await open();
    try {
      const a = o.rec.unitBySerial('HD40-0101');
      const b = o.rec.unitBySerial('HD40-0102');
      assert.equal(o.rec.sheetSettings(a.id).updatedAt, null, 'defaults before any save');
      const sb = o.store.listSessions(b.id)[0];
      code(() => o.rec.saveSheetSettings({ unitId: a.id, sessionId: sb.id }), 'EINVAL', 'sessionId');
      code(
        () => o.rec.saveSheetSettings({ unitId: a.id, limitSetIds: ['nope'] }),
        'ENOTFOUND',
        'limitSetIds[0]',
      );
      const saved = await o.service.invoke('saveSheetSettings', {
        unitId: a.id,
        reference: 'tone',
        notes: 'Re-aligned after transport.',
      });
      assert.equal(saved.reference, 'tone');
      assert.equal(o.rec.sheetSettings(a.id).notes, 'Re-aligned after transport.');
    } finally {
      await o.cleanup();
    }
  });

  it('states a session as SSB and then reports its opposite sideband instead of balance', async () => {
    const o = await open();
    try {
      const u = o.rec.unitBySerial('HD40-0101');
      const s = o.store.listSessions(u.id)[0];
      assert.equal(loadSessionResult(o.store, s.id).figures.emission, 'dsb');
      await o.service.invoke('setEmission', { sessionId: s.id, emission: 'usb' });
      const r = await o.service.invoke('sessionResults', { sessionId: s.id });
      assert.equal(r.emission, 'usb');
      assert.equal(r.figures.balance, null);
      // The demo board is DSB: both sidebands equal, so "opposite sideband" is 0 dB: honest, and a fail.
      assert.ok(Math.abs(r.figures.opposite!.value) < 1.5);
      assert.equal(r.verdicts.find((v) => v.setId === 'preset:common-practice')!.overall, 'fail');
      const bad = await o.service.call('setEmission', { sessionId: s.id, emission: 'am' });
      assert.equal(!bad.ok && bad.field, 'emission');
    } finally {
      await o.cleanup();
    }
  });
});

describe('records.compareDesign() on the demo scenario', () => {
  it('shows R2 suppressing the carrier better than R1 by more than the measurement can blur', async () => {
    const o = await open();
    try {
      const d = o.rec.findDesign('Heron DSB-40');
      const c = compareDesign(o.store, d.id, 'pep');
      assert.deepEqual(
        c.revisions.map((r) => [r.name, r.unitCount, r.sessionCount]),
        [
          ['R1', 3, 3],
          ['R2', 3, 3],
        ],
      );
      const r1 = c.revisions[0].metrics.carrier!;
      const r2 = c.revisions[1].metrics.carrier!;
      // The demo's layout leakage: R1 -52 dBc, R2 -67 dBc relative to one sideband (PEP is 6.02 dB above).
      assert.ok(r1.median > 50 && r1.median < 60, `R1 median ${r1.median}`);
      assert.ok(r2.median > 65 && r2.median < 74, `R2 median ${r2.median}`);
      assert.ok(r2.min > r1.max, 'every R2 unit beats every R1 unit');
      const ch = c.changes.find((x) => x.metric === 'carrier')!;
      assert.equal(ch.kind, 'better');
      assert.ok(ch.betterByDb > 3 * ch.thresholdDb);
      for (const v of r2.values)
        assert.ok(v.sessionId && v.serial.startsWith('HD40-02'), 'each value traces to its unit and session');
      const viaService = await o.service.invoke('compareRevisions', { designId: d.id });
      assert.equal(viaService.reference, 'pep');
      assert.equal(viaService.revisions[1].metrics.carrier!.median, r2.median);
    } finally {
      await o.cleanup();
    }
  });
});
