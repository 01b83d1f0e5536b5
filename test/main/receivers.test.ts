// Receiver profiles and serial templates through the service: stored in the database (schema 2), validated with
// the field named, exportable; the guided calibration against a receiver behind our scripted protocol server;
// sessions that keep the calibration (and template) they were read with; a serial session over a pty pair.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import type { Calibration } from '../../app/calibration';
import type { StoredReceiver } from '../../app/receiver';
import { Service } from '../../main/service';
import { RigServer } from '../../main/sim/rigserver';
import { SimSerialDevice } from '../../main/sim/serialdevice';
import { createSource } from '../../main/sources';
import { Store } from '../../main/store/store';
import { ptyPair } from '../helpers/pty';
import { TRIMS } from '../helpers/session';
import { tempDb, tempDir } from '../helpers/tmp';

async function fresh() {
  const db = tempDb();
  const store = new Store(db.file);
  const service = new Service({ store, mode: 'cli', createSource: (spec, env) => createSource(spec, env) });
  const d = await service.invoke('createDesign', { name: 'Receiver test' });
  const r = await service.invoke('createRevision', { designId: d.id, name: 'A' });
  const u = await service.invoke('createUnit', { revisionId: r.id, serial: 'R-1' });
  return {
    service,
    store,
    db,
    unitId: u.id,
    async cleanup() {
      await service.close();
      store.close();
      db.cleanup();
    },
  };
}

const myTemplate = {
  name: 'bench-meter-b',
  description: 'our own test meter',
  defaultBaud: 38400,
  dataBits: 8,
  parity: 'none',
  stopBits: 1,
  terminator: '\r',
  query: 'LVL?',
  response: '^LVL ([-+]?\\d+(?:\\.\\d+)?)$',
  quantity: 'strength-db',
  setFrequency: { command: 'FRQ {hz}', ack: '^OK$' },
};

describe('templates through the service', () => {
  it('lists the built-in ones, stores ours, refuses mistakes naming the field, and round-trips through export', async () => {
    const t = await fresh();
    try {
      const names = (await t.service.invoke('listTemplates', {})).map(
        (e) => `${e.template.name}:${e.builtin}`,
      );
      assert.deepEqual(names, ['db-over-s9:true', 'hex-counts:true', 's-point:true']);
      const saved = await t.service.invoke('saveTemplate', { template: myTemplate });
      assert.equal(saved.timeoutMs, 500);
      const bad = await t.service.call('saveTemplate', { template: { ...myTemplate, response: '^LVL .*$' } });
      assert.deepEqual(bad.ok ? null : [bad.code, bad.field], ['EINVAL', 'template.response']);
      const builtin = await t.service.call('saveTemplate', {
        template: { ...myTemplate, name: 'db-over-s9' },
      });
      assert.deepEqual(builtin.ok ? null : builtin.code, 'ECONFLICT');
      const again = await t.service.call('saveTemplate', { template: myTemplate, replace: false });
      assert.deepEqual(again.ok ? null : again.code, 'ECONFLICT');
      // Export is the stored JSON; importing it elsewhere gives the same template.
      const exported = JSON.parse(
        JSON.stringify((await t.service.invoke('listTemplates', {})).at(-1)!.template),
      );
      const other = await fresh();
      try {
        assert.deepEqual(await other.service.invoke('saveTemplate', { template: exported }), saved);
      } finally {
        await other.cleanup();
      }
      await t.service.invoke('deleteTemplate', { name: 'bench-meter-b' });
      assert.equal((await t.service.invoke('listTemplates', {})).length, 3);
    } finally {
      await t.cleanup();
    }
  });
});

describe('receiver profiles and the guided calibration', () => {
  it('stores a profile, refuses bad ones naming the field, and keeps a template in use from removal', async () => {
    const t = await fresh();
    try {
      await t.service.invoke('saveTemplate', { template: myTemplate });
      const rx = await t.service.invoke('saveReceiver', {
        receiver: {
          name: 'Bench receiver',
          source: 'serial:/dev/ttyUSB0@38400',
          template: 'bench-meter-b',
          bandwidthHz: 500,
          maxInputDbm: 10,
        },
      });
      assert.equal(rx.template, 'bench-meter-b');
      assert.equal(rx.calibration, null);
      const cases: [Record<string, unknown>, string][] = [
        [{ name: 'x', source: 'serial:/dev/ttyUSB0@38400', bandwidthHz: 500, maxInputDbm: 10 }, 'template'],
        [{ name: 'x', source: 'net:127.0.0.1:4532', bandwidthHz: 500, maxInputDbm: 90 }, 'maxInputDbm'],
        [{ name: 'x', source: 'telepathy', bandwidthHz: 500, maxInputDbm: 10 }, 'source'],
        [
          {
            name: 'x',
            source: 'net:127.0.0.1:4532',
            template: 'db-over-s9',
            bandwidthHz: 500,
            maxInputDbm: 10,
          },
          'template',
        ],
        [
          {
            name: 'x',
            source: 'net:127.0.0.1:4532',
            bandwidthHz: 500,
            maxInputDbm: 10,
            calibration: {
              name: 'c',
              quantity: 'strength-db',
              bands: [
                {
                  fromHz: 0,
                  toHz: 30e6,
                  points: [
                    { raw: 0, dbm: -73 },
                    { raw: -5, dbm: -60 },
                  ],
                },
              ],
            },
          },
          'bands[0].points[1].raw',
        ],
      ];
      for (const [receiver, field] of cases) {
        const r = await t.service.call('saveReceiver', { receiver });
        assert.deepEqual(r.ok ? null : [r.code, r.field], ['EINVAL', field], JSON.stringify(receiver));
      }
      const dup = await t.service.call('saveReceiver', {
        receiver: { ...rx, id: undefined, injections: undefined, createdAt: undefined, updatedAt: undefined },
      });
      assert.equal(dup.ok ? null : dup.code, 'EINVAL'); // unknown keys refused: a profile is saved as typed
      const inUse = await t.service.call('deleteTemplate', { name: 'bench-meter-b' });
      assert.equal(inUse.ok ? null : inUse.code, 'ECONFLICT');
      if (!inUse.ok) assert.match(inUse.message, /used by receiver "Bench receiver"/);
      await t.service.invoke('deleteReceiver', { id: rx.id });
      await t.service.invoke('deleteTemplate', { name: 'bench-meter-b' });
    } finally {
      await t.cleanup();
    }
  });

  it('fits a table from generator injections through a pad, and each reading of a session stores it', async () => {
    // Our receiver reads 8 dB high at S9 and compresses its scale: STRENGTH -40 at -120 dBm, +2 at -80 dBm.
    const srv = new RigServer({ script: [-40] });
    const port = await srv.listen();
    const t = await fresh();
    try {
      const rx = await t.service.invoke('saveReceiver', {
        receiver: { name: 'Test rig', source: `net:127.0.0.1:${port}`, bandwidthHz: 2400, maxInputDbm: 0 },
      });
      const readAt = async (strength: number) => {
        srv.setScript([strength]);
        return t.service.invoke('calibrationRead', { receiverId: rx.id, freqHz: 7.1e6, count: 3 });
      };
      const a = await readAt(-40);
      const b = await readAt(2);
      assert.deepEqual([a.raw, a.n, a.spread, a.quantity], [-40, 3, 0, 'strength-db']);
      assert.equal(srv.frequencyHz, 7_100_000, 'the receiver was tuned to the generator frequency');
      const fit = await t.service.invoke('fitCalibration', {
        receiverId: rx.id,
        injections: [
          { freqHz: 7.1e6, generatorDbm: -80, padDb: 40, raw: a.raw },
          { freqHz: 7.1e6, generatorDbm: -40, padDb: 40, raw: b.raw },
        ],
        save: true,
      });
      // Level at the receiver = generator level - pad (the guided calibration's definition).
      assert.deepEqual(fit.calibration.bands[0].points, [
        { raw: -40, dbm: -120 },
        { raw: 2, dbm: -80 },
      ]);
      assert.deepEqual(
        fit.points.map((p) => p.dbm),
        [-120, -80],
      );
      const stored = fit.receiver as StoredReceiver;
      assert.equal(stored.injections.length, 2);
      assert.equal(
        (await t.service.invoke('listReceivers', {}))[0].calibration?.name,
        'Test rig (guided calibration)',
      );

      // A session with this profile reads through the fitted table, and keeps it with each reading.
      srv.setScript([-19]);
      const s = await t.service.invoke('createSession', {
        unitId: t.unitId,
        receiver: {
          name: stored.name,
          source: stored.source,
          calibration: stored.calibration,
          bandwidthHz: 2400,
          maxInputDbm: 0,
        },
        path: [{ kind: 'pad', db: 60 }],
        carrierHz: 7.1e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: TRIMS,
      });
      await t.service.invoke('openSession', { sessionId: s.id });
      const kept = await t.service.invoke('keep', { waitSettled: true });
      // -19 lies halfway between -40 and +2: -100 dBm at the receiver, +60 dB of pad (linear interpolation).
      assert.equal(kept.dbmRx, -100);
      assert.equal(kept.dbmDut, -40);
      const cal = t.store.correctionOf(kept.id).calibration as Calibration;
      assert.equal(cal.name, 'Test rig (guided calibration)');
      // While the session reads this receiver, a calibration read of it is refused.
      const busy = await t.service.call('calibrationRead', { receiverId: rx.id, freqHz: 7.1e6, count: 1 });
      assert.equal(busy.ok ? null : busy.code, 'ECONFLICT');
    } finally {
      await t.cleanup();
      await srv.close();
    }
  });

  it('calibrates band by band: a second band joins the first halfway (geometrically) between them', async () => {
    const t = await fresh();
    try {
      const rx = await t.service.invoke('saveReceiver', {
        receiver: { name: 'Two-band rig', source: 'net:127.0.0.1:4532', bandwidthHz: 2400, maxInputDbm: 0 },
      });
      const inj = (freqHz: number, off: number) => [
        { freqHz, generatorDbm: -80 + off, padDb: 40, raw: -40 },
        { freqHz, generatorDbm: -40 + off, padDb: 40, raw: 2 },
      ];
      await t.service.invoke('fitCalibration', { receiverId: rx.id, injections: inj(7.1e6, 0), save: true });
      const r = await t.service.invoke('fitCalibration', {
        receiverId: rx.id,
        injections: inj(14.2e6, 10),
        save: true,
      });
      const bands = r.calibration.bands.map((b) => [
        Math.round(b.fromHz),
        Math.round(b.toHz),
        b.points[0].dbm,
      ]);
      // 7.1 MHz keeps its table up to sqrt(7.1 x 14.2) MHz = 7.1 x sqrt(2) = 10.0409 MHz (computed); 14.2 MHz's reaches an octave up.
      assert.deepEqual(bands, [
        [3.55e6, 10040916, -120],
        [10040916, 28.4e6, -110],
      ]);
      assert.equal(r.receiver?.injections.length, 4);
    } finally {
      await t.cleanup();
    }
  });

  it('needs a table for a receiver that reports raw counts, and says so when a session is set up without one', async () => {
    const t = await fresh();
    try {
      const r = await t.service.call('createSession', {
        unitId: t.unitId,
        receiver: {
          name: 'counts',
          source: 'serial:/dev/ttyS9@9600,template=hex-counts',
          calibration: null,
          bandwidthHz: 500,
          maxInputDbm: 0,
        },
        path: [{ kind: 'pad', db: 60 }],
        carrierHz: 7.1e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: TRIMS,
      });
      assert.deepEqual(r.ok ? null : [r.code, r.field], ['EINVAL', 'calibration']);
      if (!r.ok) assert.match(r.message, /raw counts, which mean nothing without a calibration table/);
    } finally {
      await t.cleanup();
    }
  });
});

describe('a serial session over a pty pair', () => {
  it('keeps a full copy of the template, reads S-units through R.1, and records a closed line as a gap', async () => {
    const dir = tempDir();
    const pty = await ptyPair(dir.dir);
    const dev = new SimSerialDevice({ path: pty.b, commandSet: 's-point', script: [6] });
    await dev.start();
    const t = await fresh();
    try {
      const s = await t.service.invoke('createSession', {
        unitId: t.unitId,
        receiver: {
          name: 'S-meter',
          source: `serial:${pty.a}@4800`,
          template: 's-point',
          calibration: null,
          bandwidthHz: 2400,
          maxInputDbm: 0,
        },
        path: [{ kind: 'pad', db: 60 }],
        carrierHz: 3.7e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: TRIMS,
      });
      assert.equal((s.receiver.template as { name: string }).name, 's-point');
      assert.equal((s.receiver.calibration as Calibration).quantity, 's-units');
      await t.service.invoke('openSession', { sessionId: s.id });
      const r = await t.service.invoke('keep', { waitSettled: true });
      // S 10.0 (S9 + 6 dB): IARU R.1: -73 + 6 = -67 dBm at the receiver; 60 dB of pad.
      assert.equal(r.raw, 10);
      assert.equal(r.dbmRx, -67);
      assert.equal(r.dbmDut, -7);
      await dev.stop();
      await pty.kill();
      const deadline = Date.now() + 5000;
      while (!t.store.gaps(s.id).length && Date.now() < deadline) await new Promise((x) => setTimeout(x, 50));
      const g = t.store.gaps(s.id)[0];
      assert.equal(g.code, 'EIO');
      assert.match(g.message, /went away/);
      assert.match(t.service.status().lastError ?? '', /went away|reconnect/);
      const before = t.store.readings(s.id).length;
      await new Promise((x) => setTimeout(x, 600));
      assert.equal(t.store.readings(s.id).length, before, 'nothing stored while the line is gone');
    } finally {
      await t.cleanup();
      await dev.stop();
      await pty.kill();
      dir.cleanup();
    }
  });
});
