import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { serviceWithSession } from '../helpers/session';
import { connectionOf } from '../../main/store/connection';

const COUPLER_AND_PAD = [
  { kind: 'coupler', couplingDb: 30 },
  { kind: 'pad', db: 10 },
];

describe('Service', () => {
  it('checks receiver safety again before a stored session is read live, however it got into the database', async () => {
    const t = await serviceWithSession(); // 30 dBm PEP through 50 dB into a receiver rated 10 dBm: safe
    try {
      // As a hand-edited database or an old import could hold it: 70 dBm PEP, +20 dBm into the receiver.
      connectionOf(t.store).prepare('UPDATE sessions SET tx_pep_dbm = 70 WHERE id = ?').run(t.session.id);
      const r = await t.service.call('openSession', { sessionId: t.session.id });
      assert.equal(r.ok, false);
      if (!r.ok) {
        assert.equal(r.code, 'EUNSAFE');
        assert.match(r.message, /refused: .*rated maximum of 10 dBm/);
      }
      assert.equal((await t.service.invoke('status', {})).live, false);
      assert.equal(t.store.readings(t.session.id, { limit: 10 }).length, 0, 'the receiver was read');
    } finally {
      await t.cleanup();
    }
  });

  it('refuses a set-up whose receiver input at PEP exceeds the rated maximum (EUNSAFE), and stores nothing', async () => {
    const t = await serviceWithSession();
    try {
      const before = t.store.listSessions().length;
      // 50 dBm PEP (100 W) through a 20 dB pad = +30 dBm at a receiver rated +10 dBm.
      const r = await t.service.call('createSession', {
        unitId: t.unitId,
        receiver: { name: 'rx', source: 'sim', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
        path: [{ kind: 'pad', db: 20 }],
        carrierHz: 7.1e6,
        toneHz: 1000,
        txPepDbm: 50,
        trims: [{ key: 'A', label: 'R', unit: 'turns', min: 0, max: 10 }],
      });
      assert.equal(r.ok, false);
      if (!r.ok) {
        assert.equal(r.code, 'EUNSAFE');
        assert.match(r.message, /30\.3 dBm into the receiver/); // worst case: the 20 dB pad's 0.3 dB tolerance
        assert.match(r.message, /at least 20\.3 dB/);
        assert.match(r.message, /local regulations/);
      }
      assert.equal(t.store.listSessions().length, before);
    } finally {
      await t.cleanup();
    }
  });

  it('answers an unknown session with ENOTFOUND naming sessionId', async () => {
    const t = await serviceWithSession();
    try {
      const r = await t.service.call('openSession', { sessionId: 'no-such-session' });
      assert.deepEqual(r.ok ? null : [r.code, r.field], ['ENOTFOUND', 'sessionId']);
    } finally {
      await t.cleanup();
    }
  });

  it('rejects malformed arguments with EINVAL naming the field', async () => {
    const t = await serviceWithSession();
    try {
      const r = await t.service.call('createUnit', { revisionId: 'x', serial: '' });
      assert.deepEqual(r.ok ? null : [r.code, r.field], ['EINVAL', 'serial']);
      // A stored session's own fields (id, dates, rxPepDbm) are no set-up arguments: the strict contract
      // refuses them, so only the set-up is passed.
      const { id: _id, startedAt: _s, endedAt: _e, rxPepDbm: _r, ...setup } = t.session;
      const r2 = await t.service.call('createSession', {
        ...setup,
        unitId: t.unitId,
        path: [{ kind: 'pad', db: -20 }],
      });
      assert.equal(r2.ok, false);
      if (!r2.ok) assert.match(r2.field ?? '', /path\[0\]\.db/);
      const r3 = await t.service.call('dropTables', {});
      assert.deepEqual(r3.ok ? null : [r3.code, r3.field], ['EINVAL', 'call']);
    } finally {
      await t.cleanup();
    }
  });

  it('stores every live reading of an open session, corrected through R.1 and the path', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      await t.service.invoke('tune', { role: 'upper' });
      const r = await t.service.invoke('keep', { note: 'tone', waitSettled: true });
      const all = t.store.readings(t.session.id);
      assert.ok(all.length >= 5, `all live readings stored, got ${all.length}`);
      // R.1: dBm = -73 + strength (dB re S9) below 30 MHz; the path adds 30 + 20 dB back.
      assert.equal(r.dbmRx, -73 + r.raw);
      assert.equal(r.dbmDut, r.dbmRx + 50);
      // One DSB sideband of 30 dBm PEP is 23.98 dBm at the DUT (docs/references.md, PEP = 4 x one tone).
      assert.ok(Math.abs(r.dbmDut - 23.98) <= 1.0, `upper tone ${r.dbmDut}`);
      assert.equal(r.role, 'upper');
      assert.ok(r.kept && r.settled);
    } finally {
      await t.cleanup();
    }
  });

  it('builds the simulated bench to the declared PEP and path, and a spec that overrides the pad shows it', async () => {
    // 27 dBm (0.5 W) PEP DSB through a 30 dB coupler and a 10 dB pad: each sideband 27 - 6.02 = 20.98 dBm at the transmitter
    // (docs/references.md § Modulation and power: PEP = 4 x one tone). The bench must transmit what is declared.
    const declared = await serviceWithSession({ txPepDbm: 27, path: COUPLER_AND_PAD });
    try {
      await declared.service.invoke('openSession', { sessionId: declared.session.id });
      await declared.service.invoke('tune', { role: 'upper' });
      const r = await declared.service.invoke('keep', { note: '', waitSettled: true });
      assert.equal(r.dbmDut, r.dbmRx + 40);
      assert.ok(Math.abs(r.dbmDut - 20.98) <= 1.0, `upper tone ${r.dbmDut} dBm, declared 20.98`);
    } finally {
      await declared.cleanup();
    }
    // The spec states 50 dB of loss under the same 40 dB declaration: a wrong declaration, simulated. The
    // corrected figure is then 10 dB low, as it would be on a real bench with the wrong pad typed in.
    const wrong = await serviceWithSession({
      txPepDbm: 27,
      path: COUPLER_AND_PAD,
      source: 'sim:seed=5,loss=50',
    });
    try {
      await wrong.service.invoke('openSession', { sessionId: wrong.session.id });
      await wrong.service.invoke('tune', { role: 'upper' });
      const r = await wrong.service.invoke('keep', { note: '', waitSettled: true });
      assert.ok(Math.abs(r.dbmDut - (20.98 - 10)) <= 1.0, `upper tone ${r.dbmDut} dBm under a wrong pad`);
    } finally {
      await wrong.cleanup();
    }
  });

  it('sweeps a trimmer on the simulated bench and keeps a settled reading per step, deepest near the balance', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      const res = await t.service.invoke('sweep', { trim: 'A', from: 2, to: 7, steps: 11 });
      assert.equal(res.readings.length, 11);
      assert.ok(res.readings.every((r) => r.kept && r.role === 'carrier'));
      const kept = await t.service.invoke('readings', { sessionId: t.session.id, keptOnly: true });
      assert.equal(kept.length, 11);
      const levels = res.readings.map((r) => r.dbmDut);
      const i = levels.indexOf(Math.min(...levels));
      assert.ok(i > 0 && i < 10, 'the null lies inside the sweep');
      // B stays where it was, so its own residual limits the dip: a V, not yet the deepest null.
      assert.ok(
        levels[0] - levels[i] > 8 && levels[10] - levels[i] > 8,
        `V-shape: ${levels.map((x) => x.toFixed(0)).join(' ')}`,
      );
    } finally {
      await t.cleanup();
    }
  });

  it('refuses keep when no session is open', async () => {
    const t = await serviceWithSession();
    try {
      await assert.rejects(
        t.service.invoke('keep', {}),
        (e: unknown) => e instanceof BenchError && e.code === 'ECONFLICT',
      );
    } finally {
      await t.cleanup();
    }
  });

  it('refuses a trimmer position outside its range, naming the trimmer', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      const r = await t.service.call('setTrims', { trims: { A: 12 } });
      assert.deepEqual(r.ok ? null : [r.code, r.field], ['EINVAL', 'trims.A']);
    } finally {
      await t.cleanup();
    }
  });
});

describe('Service: strict contract', () => {
  it('refuses a misspelt argument by name, with the nearest known one, and keeps nothing', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      const before = t.store.readings(t.session.id, { keptOnly: true }).length;
      const r = await t.service.call('keep', { waitSettle: true });
      assert.equal(r.ok, false);
      if (r.ok) return;
      assert.equal(r.code, 'EINVAL');
      assert.equal(r.field, 'waitSettle');
      assert.match(r.message, /did you mean "waitSettled"/);
      assert.equal(t.store.readings(t.session.id, { keptOnly: true }).length, before, 'nothing was kept');
      const ok = await t.service.call('keep', { waitSettled: true });
      assert.equal(ok.ok, true, 'the right spelling keeps');
    } finally {
      await t.cleanup();
    }
  });
});
