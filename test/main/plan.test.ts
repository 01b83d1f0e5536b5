// Frequency-stepped plans through the service: end to end on the simulated bench and against the real
// rig-control daemon, with progress, cancel and resume, a restart in the middle, the safety and calibration
// checks before a start, manual steps, and the daemon killed mid-plan.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import type { PlanView, ProgressEvent } from '../../app/api';
import { Service } from '../../main/service';
import { SimBench } from '../../main/sim/bench';
import { RigServer } from '../../main/sim/rigserver';
import { SimSerialDevice } from '../../main/sim/serialdevice';
import { createSource } from '../../main/sources';
import { Store } from '../../main/store/store';
import { ptyPair } from '../helpers/pty';
import { startRigctld } from '../helpers/rigctld';
import { serviceWithSession, TRIMS } from '../helpers/session';
import { tempDb, tempDir } from '../helpers/tmp';
import { connectionOf } from '../../main/store/connection';

async function until<T>(fn: () => T | undefined | null | false, ms = 20000, what = 'condition'): Promise<T> {
  const end = Date.now() + ms;
  for (;;) {
    const v = fn();
    if (v) return v;
    if (Date.now() > end) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 20));
  }
}

/** A service on a fresh database with one unit, for sources other than the simulated bench. */
async function bareService() {
  const db = tempDb();
  const store = new Store(db.file);
  const service = new Service({ store, mode: 'cli', createSource: (spec, env) => createSource(spec, env) });
  const d = await service.invoke('createDesign', { name: 'Plan test DSB' });
  const r = await service.invoke('createRevision', { designId: d.id, name: 'A' });
  const u = await service.invoke('createUnit', { revisionId: r.id, serial: 'P-1' });
  return {
    service,
    store,
    unitId: u.id,
    async session(source: string, extra: Record<string, unknown> = {}) {
      return service.invoke('createSession', {
        unitId: u.id,
        receiver: { name: 'rx', source, calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
        path: [
          { kind: 'coupler', couplingDb: 30 },
          { kind: 'pad', db: 20 },
        ],
        carrierHz: 7.1e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: TRIMS,
        ...extra,
      });
    },
    async cleanup() {
      await service.close();
      store.close();
      db.cleanup();
    },
  };
}

describe('plans on the simulated bench', () => {
  it('reads every point with its role, averages N stored readings, and reports progress', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      const progress: ProgressEvent[] = [];
      t.service.listen('progress', (p) => progress.push(p));
      const v0 = await t.service.invoke('planStart', {
        plan: {
          points: ['carrier', 'upper', 'lower', 'imd3u', 'imd3l', 'h2', 'reference'],
          average: 4,
          settleMs: 300,
          reference: 'tone',
        },
      });
      assert.equal(v0.state, 'running');
      const v = await t.service.plans.wait(v0.id);
      assert.equal(v.state, 'done', v.message);
      assert.ok(v.points.every((p) => p.state === 'done' && p.avg?.n === 4));
      // Each point's readings are ordinary stored readings of the session with the point's role and frequency.
      for (const p of v.points) {
        const ids = t.service.plans.repo.pointReadings(v.id, p.idx);
        assert.equal(ids.length, 4);
        const rows = connectionOf(t.store)
          .prepare(`SELECT role, freq_hz AS f FROM readings WHERE id IN (${ids.join(',')})`)
          .all() as { role: string; f: number }[];
        assert.ok(
          rows.every((r) => r.role === p.role && r.f === p.freqHz),
          `${p.role}: ${JSON.stringify(rows)}`,
        );
      }
      const row = (role: string) => v.rows.find((r) => r.role === role)!;
      // One DSB sideband of 30 dBm PEP is 23.98 dBm (docs/references.md: PEP = 4 x one tone's power).
      assert.ok(Math.abs(row('upper').dbmDut! - 23.98) < 1.5, `upper ${row('upper').dbmDut}`);
      // The simulated board's third-order products lie 32 dB below one tone (main/sim/transmitter.ts).
      assert.ok(Math.abs(row('imd3u').relDb! + 32) < 2, `IMD3 ${row('imd3u').relDb}`);
      assert.ok(row('carrier').relDb! < -15, `carrier ${row('carrier').relDb} dBc`);
      // Unbalanced, the simulated board's carrier has half one sideband's power, -3.01 dB (main/sim/transmitter.ts).
      assert.ok(
        Math.abs(row('reference').relDb! + 3.01) < 1.5,
        `unbalanced carrier ${row('reference').relDb}`,
      );
      assert.equal(v.reference?.label, 'mean of the two tones');
      // Progress: at least one report per point, counting up to the total, and a closing one.
      const mine = progress.filter((p) => p.task === `plan:${v.id}` && p.total === 7);
      assert.ok(mine.length >= 7 * 2);
      assert.equal(mine.at(-1)?.done, 7);
      assert.equal(mine.at(-1)?.message, 'plan complete');
      // The same table against PEP: every figure 6.02 dB lower (PEP of two equal tones is 4 x one tone).
      const pep = t.service.plans.view({
        ...t.service.plans.repo.getRun(v.id),
        spec: { ...v.spec, reference: 'pep' },
      });
      const d = row('carrier').relDb! - pep.rows.find((r) => r.role === 'carrier')!.relDb!;
      assert.ok(Math.abs(d - 6.02) < 0.2, `PEP is ${d} dB above the tone mean`); // tones within a few tenths of a dB
    } finally {
      await t.cleanup();
    }
  });

  it('cancels, keeps the points already done, and resumes at the first point left', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      const v0 = await t.service.invoke('planStart', {
        plan: { points: ['carrier', 'upper', 'lower', 'imd3u', 'imd3l'], average: 20, settleMs: 300 },
      });
      await until(() => t.service.plans.get(v0.id).points[0].state === 'done', 20000, 'the first point');
      const cancelled = await t.service.invoke('planCancel', { planId: v0.id });
      assert.equal(cancelled.state, 'cancelled');
      const doneBefore = cancelled.points.filter((p) => p.state === 'done');
      assert.ok(doneBefore.length >= 1 && doneBefore.length < 5);
      const idsBefore = doneBefore.map((p) => t.service.plans.repo.pointReadings(v0.id, p.idx));
      await t.service.invoke('planResume', { planId: v0.id });
      const v = await t.service.plans.wait(v0.id);
      assert.equal(v.state, 'done');
      assert.deepEqual(
        doneBefore.map((p) => t.service.plans.repo.pointReadings(v0.id, p.idx)),
        idsBefore,
        'points done before the cancel are not read again',
      );
      await assert.rejects(t.service.invoke('planResume', { planId: v0.id }), /complete/);
    } finally {
      await t.cleanup();
    }
  });

  it('shows a run cut off by a restart as interrupted, and resumes it', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      const v0 = await t.service.invoke('planStart', {
        plan: { points: ['carrier', 'upper'], average: 200, settleMs: 0 },
      });
      // While its runner lives (the session's lease is held and fresh), another service leaves it running.
      assert.equal(new Service({ store: t.store, mode: 'cli' }).plans.repo.getRun(v0.id).state, 'running');
      // A crash: the lease's holder is gone (a process id no process has). A second program opening the same
      // database then finds the run still marked running there, and shows it interrupted.
      connectionOf(t.store).prepare('UPDATE session_leases SET pid = 2147483646').run();
      const s2 = new Service({ store: t.store, mode: 'cli' });
      assert.equal(s2.plans.repo.getRun(v0.id).state, 'interrupted');
      await t.service.invoke('planCancel', { planId: v0.id }).catch(() => undefined);
      await t.service.invoke('planResume', { planId: v0.id });
      assert.equal((await t.service.plans.wait(v0.id)).state, 'done');
    } finally {
      await t.cleanup();
    }
  });

  it('refuses a plan with the unbalanced-carrier reference when its 3.52 dB more would overdrive the receiver', async () => {
    // 30 dBm PEP through 30 dB of path: 0.0 dBm at PEP (0.6 dB more at the tolerances' low end), rated 2 dBm.
    const t = await serviceWithSession({ path: [{ kind: 'pad', db: 30 }], txPepDbm: 30 });
    try {
      const s = await t.service.invoke('createSession', {
        unitId: t.unitId,
        receiver: { name: 'rx', source: 'sim:seed=5', calibration: null, bandwidthHz: 500, maxInputDbm: 2 },
        path: [{ kind: 'pad', db: 30 }],
        carrierHz: 7.1e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: TRIMS,
      });
      await t.service.invoke('openSession', { sessionId: s.id });
      const r = await t.service.call('planStart', { plan: { points: ['carrier', 'upper', 'reference'] } });
      assert.equal(r.ok, false);
      if (!r.ok) {
        assert.equal(r.code, 'EUNSAFE');
        assert.equal(r.field, 'plan.points');
        // 20*log10(3/2) = 3.52 dB (computed): 30 + 3.52 - 29.7 = 3.82 dBm worst case, above +2 dBm.
        assert.match(r.message, /raises the peak envelope power by 3\.52 dB/);
        assert.match(r.message, /3\.82 dBm into the receiver/);
        assert.match(r.message, /local regulations/);
      }
      assert.equal(t.service.plans.repo.listRuns(s.id).length, 0, 'nothing stored');
      const ok = await t.service.call('planStart', {
        plan: { points: ['carrier', 'upper'], average: 1, settleMs: 0 },
      });
      assert.equal(ok.ok, true, 'without the reference point the same set-up is within the rating');
      if (ok.ok) await t.service.plans.wait((ok.value as PlanView).id);
    } finally {
      await t.cleanup();
    }
  });

  it('refuses a point the calibration does not cover, naming it', async () => {
    const t = await serviceWithSession();
    try {
      const cal = {
        name: 'HF only',
        quantity: 'strength-db',
        bands: [
          {
            fromHz: 1e6,
            toHz: 30e6,
            points: [
              { raw: -54, dbm: -127 },
              { raw: 60, dbm: -13 },
            ],
          },
        ],
      };
      const s = await t.service.invoke('createSession', {
        unitId: t.unitId,
        receiver: { name: 'rx', source: 'sim:seed=5', calibration: cal, bandwidthHz: 500, maxInputDbm: 10 },
        path: [{ kind: 'pad', db: 50 }],
        carrierHz: 7.1e6,
        toneHz: 1000,
        txPepDbm: 30,
        trims: TRIMS,
      });
      await t.service.invoke('openSession', { sessionId: s.id });
      const r = await t.service.call('planStart', { plan: { points: ['carrier', 'upper', 'h4', 'h5'] } });
      // h4 = 28.4 MHz lies inside the table's 1-30 MHz, h5 = 35.5 MHz does not.
      assert.deepEqual(r.ok ? null : [r.code, r.field], ['EINVAL', 'plan.points[3]']);
      if (!r.ok) assert.match(r.message, /point h5: 35\.5 MHz is outside calibration bands of "HF only"/);
    } finally {
      await t.cleanup();
    }
  });

  it('rejects a malformed plan naming the field', async () => {
    const t = await serviceWithSession();
    try {
      await t.service.invoke('openSession', { sessionId: t.session.id });
      const a = await t.service.call('planStart', { plan: { points: ['carrier', 'imd7'] } });
      assert.deepEqual(a.ok ? null : [a.code, a.field], ['EINVAL', 'plan.points[1]']);
      const b = await t.service.call('planStart', { plan: { points: ['carrier', 'carrier'] } });
      assert.deepEqual(b.ok ? null : [b.code, b.field], ['EINVAL', 'plan.points']);
      const c = await t.service.call('planStart', {
        plan: { points: ['carrier', 'upper'], reference: 'unbalanced' },
      });
      assert.deepEqual(c.ok ? null : [c.code, c.field], ['EINVAL', 'plan.reference']);
    } finally {
      await t.cleanup();
    }
  });
});

describe('plans on real links', () => {
  it('asks the operator to unbalance and rebalance the modulator when the source cannot', async () => {
    const srv = new RigServer({ script: [-30] });
    const port = await srv.listen();
    const b = await bareService();
    try {
      const s = await b.session(`net:127.0.0.1:${port}`);
      await b.service.invoke('openSession', { sessionId: s.id });
      const v0 = await b.service.invoke('planStart', {
        plan: { points: ['upper', 'reference', 'lower'], average: 2, settleMs: 0, settleTimeoutMs: 500 },
      });
      const w1 = await until(() => b.service.plans.get(v0.id).waiting, 10000, 'the unbalance step');
      assert.match(w1.prompt, /^Unbalance the modulator/);
      assert.match(w1.prompt, /no stronger/);
      assert.equal(b.service.plans.get(v0.id).points[0].state, 'done', 'the tone before it was read');
      await b.service.invoke('planContinue', { planId: v0.id });
      const w2 = await until(
        () =>
          b.service.plans.get(v0.id).waiting?.prompt.startsWith('Return')
            ? b.service.plans.get(v0.id).waiting
            : null,
        10000,
        'the rebalance step',
      );
      assert.match(w2.prompt, /Return the balance trimmers/);
      await b.service.invoke('planContinue', { planId: v0.id });
      const v = await b.service.plans.wait(v0.id);
      assert.equal(v.state, 'done');
      // Against the scripted STRENGTH -30 dB: -103 dBm at the receiver (R.1), +50 dB of path.
      assert.ok(v.rows.every((r) => r.dbmDut === -103 + 50));
    } finally {
      await b.cleanup();
      await srv.close();
    }
  });

  it('warns (once) when readings come within 10 dB of the rated maximum, and flags them and the plan point', async () => {
    // STRENGTH +60 dB re S9 is -13 dBm at the receiver (IARU R.1); rated -3 dBm: 10 dB of headroom left.
    const srv = new RigServer({ script: [60] });
    const port = await srv.listen();
    const b = await bareService();
    try {
      const notices: { level: string; code?: string; message: string }[] = [];
      b.service.listen('notice', (n) => notices.push(n));
      const s = await b.session(`net:127.0.0.1:${port}`, {
        receiver: {
          name: 'rx',
          source: `net:127.0.0.1:${port}`,
          calibration: null,
          bandwidthHz: 500,
          maxInputDbm: -3,
        },
      });
      const v0 = await b.service.invoke('planStart', {
        sessionId: s.id,
        plan: { points: ['upper', 'lower'], average: 3, settleMs: 0, settleTimeoutMs: 500 },
      });
      const v = await b.service.plans.wait(v0.id);
      assert.ok(v.rows.every((r) => r.overload));
      assert.ok(b.store.readings(s.id).every((r) => r.overload && r.dbmRx === -13));
      const live = notices.filter(
        (n) =>
          n.level === 'warn' &&
          /reads -13\.0 dBm at its input, within 10 dB of its rated maximum/.test(n.message),
      );
      assert.equal(live.length, 1, 'the live warning is not repeated for every reading');
      assert.match(live[0].message, /Add attenuation/);
      assert.ok(
        notices.some(
          (n) => n.code === 'EUNSAFE' && /Upper tone: the receiver reads within 10 dB/.test(n.message),
        ),
      );
    } finally {
      await b.cleanup();
      await srv.close();
    }
  });

  it('stops at a declined manual step, resumable', async () => {
    const srv = new RigServer({ script: [-30] });
    const port = await srv.listen();
    const b = await bareService();
    try {
      const s = await b.session(`net:127.0.0.1:${port}`);
      const v0 = await b.service.invoke('planStart', {
        sessionId: s.id,
        plan: { points: ['reference', 'carrier'], average: 1, settleMs: 0, reference: 'unbalanced' },
      });
      await until(() => b.service.plans.get(v0.id).waiting, 10000, 'the unbalance step');
      await b.service.invoke('planContinue', { planId: v0.id, ok: false });
      const v = await b.service.plans.wait(v0.id);
      assert.equal(v.state, 'cancelled');
      assert.ok(v.points.every((p) => p.state === 'pending'));
    } finally {
      await b.cleanup();
      await srv.close();
    }
  });

  it('runs end to end over a serial pty pair, the device fed by the simulated bench', async () => {
    const dir = tempDir();
    const pty = await ptyPair(dir.dir);
    // A 1 W DSB board through 50 dB, read by a receiver speaking the db-over-s9 command set.
    const dev = new SimSerialDevice({
      path: pty.b,
      commandSet: 'db-over-s9',
      bench: new SimBench({ seed: 8, pathLossDb: 50 }),
    });
    await dev.start();
    const b = await bareService();
    try {
      const source = `serial:${pty.a}@38400`;
      const withTemplate = await b.session(source, {
        receiver: {
          name: 'rx',
          source,
          template: 'db-over-s9',
          calibration: null,
          bandwidthHz: 500,
          maxInputDbm: 10,
        },
      });
      const v0 = await b.service.invoke('planStart', {
        sessionId: withTemplate.id,
        plan: { points: ['carrier', 'upper', 'lower', 'imd3u', 'imd3l'], average: 4, settleMs: 600 },
      });
      const v = await b.service.plans.wait(v0.id);
      assert.equal(v.state, 'done', v.message);
      assert.ok(dev.log.includes('FRQ 7103000'), 'the device was retuned to IMD3 upper');
      const row = (role: string) => v.rows.find((r) => r.role === role)!;
      // One DSB sideband of 30 dBm PEP: 23.98 dBm (docs/references.md: PEP = 4 x one tone), through R.1 and the path.
      assert.ok(Math.abs(row('upper').dbmDut! - 23.98) < 1.5, `upper ${row('upper').dbmDut}`);
      // The simulated board's IMD3 is 32 dB below one tone (main/sim/transmitter.ts).
      assert.ok(Math.abs(row('imd3l').relDb! + 32) < 2, `IMD3 ${row('imd3l').relDb}`);
      for (const r of b.store.readings(withTemplate.id)) assert.ok(Math.abs(r.dbmRx - (-73 + r.raw)) < 1e-9);
    } finally {
      await b.cleanup();
      await dev.stop();
      await pty.kill();
      dir.cleanup();
    }
  });

  it('runs end to end against the real daemon, survives the daemon being killed mid-plan, and records the gap', async () => {
    const d = await startRigctld();
    const b = await bareService();
    try {
      const s = await b.session(`net:127.0.0.1:${d.port},timeout=300`);
      await b.service.invoke('openSession', { sessionId: s.id });
      const notices: string[] = [];
      b.service.listen('notice', (n) => notices.push(`${n.code}: ${n.message}`));
      const v0 = await b.service.invoke('planStart', {
        plan: {
          points: ['carrier', 'upper', 'lower', 'imd3u'],
          average: 5,
          settleMs: 100,
          settleTimeoutMs: 600,
        },
      });
      await until(() => b.service.plans.get(v0.id).points[0].state === 'done', 20000, 'the first point');
      await d.kill();
      await until(() => notices.some((n) => /^EIO/.test(n)), 10000, 'the fault notice');
      assert.match(b.service.status().lastError ?? '', /rig-control daemon at 127\.0\.0\.1:\d+/);
      await new Promise((r) => setTimeout(r, 800));
      await d.restart();
      const v = await b.service.plans.wait(v0.id);
      assert.equal(v.state, 'done', v.message);
      assert.ok(v.points.every((p) => p.avg?.n === 5));
      const gaps = b.store.gaps(s.id);
      assert.ok(gaps.length >= 1, 'the fault is recorded as a gap');
      assert.ok(
        gaps.every((g) => g.tEndMs !== null && g.tEndMs >= g.tStartMs),
        'each gap closed when readings came back',
      );
      assert.ok(gaps.some((g) => g.code === 'EIO'));
      // Nothing was stored that was not a reading: no reading lies inside a gap, and every one is R.1 of a
      // STRENGTH the daemon gave (an integer, dB relative to S9; IARU R.1: S9 = -73 dBm).
      const all = b.store.readings(s.id);
      for (const g of gaps)
        assert.ok(!all.some((r) => r.t > g.tStartMs && r.t < g.tEndMs!), 'no reading inside a gap');
      for (const r of all) {
        assert.ok(Number.isInteger(r.raw));
        assert.equal(r.dbmRx, -73 + r.raw);
        assert.equal(r.dbmDut, r.dbmRx + 50);
      }
      // No point's average spans the gap: each point's readings lie outside every gap.
      for (const p of v.points) {
        const ids = new Set(b.service.plans.repo.pointReadings(v.id, p.idx));
        const mine = all.filter((r) => ids.has(r.id));
        for (const g of gaps)
          assert.ok(!(mine[0].t < g.tStartMs && mine.at(-1)!.t > g.tEndMs!), `${p.role} spans a gap`);
      }
    } finally {
      await b.cleanup();
      await d.kill();
    }
  });
});
