// The null navigator's service calls (nullFit, nextTrial) on the simulated bench, whose own truth
// (tx.trueBalance()) says where the null really is. Sessions run on a virtual clock (fast sim).
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import type { TrimDef } from '../../app/api';
import { Service } from '../../main/service';
import { createSource } from '../../main/sources';
import { SimSource } from '../../main/sources/sim';
import { Store } from '../../main/store/store';
import { TRIMS } from '../helpers/session';
import { tempDb } from '../helpers/tmp';

const PATH = [
  { kind: 'coupler', couplingDb: 30 },
  { kind: 'pad', db: 20 },
];

async function simSession(source = 'sim:seed=5', trims: TrimDef[] = TRIMS, path: unknown[] = PATH) {
  const db = tempDb();
  const store = new Store(db.file);
  let sim: SimSource | null = null;
  const service = new Service({
    store,
    mode: 'cli',
    createSource: (spec, env) => {
      const s = createSource(`${spec},fast`, env);
      if (s instanceof SimSource) sim = s;
      return s;
    },
  });
  const d = await service.invoke('createDesign', { name: 'Guide test DSB' });
  const r = await service.invoke('createRevision', { designId: d.id, name: 'A' });
  const u = await service.invoke('createUnit', { revisionId: r.id, serial: 'G-1' });
  const session = await service.invoke('createSession', {
    unitId: u.id,
    receiver: { name: 'sim rx', source, calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
    path,
    carrierHz: 7.1e6,
    toneHz: 1000,
    txPepDbm: 30,
    trims,
  });
  await service.invoke('openSession', { sessionId: session.id });
  return {
    service,
    store,
    session,
    get sim(): SimSource {
      assert.ok(sim, 'the simulated bench is open');
      return sim;
    },
    async cleanup() {
      await service.close();
      store.close();
      db.cleanup();
    },
  };
}

type Sim = Awaited<ReturnType<typeof simSession>>;

/** Carrier above the deepest null reachable with the free trimmers, dB, at the bench's present balance. */
function excessDb(sim: SimSource, a: number, b: number, free: 'A' | 'AB'): number {
  const tx = sim.bench.tx;
  const c = tx.cfg;
  const bal = tx.trueBalance();
  const th = (c.angleDeg * Math.PI) / 180;
  const re = c.gainA * (a - bal.A) + c.gainB * (b - bal.B) * Math.cos(th);
  const im = c.gainB * (b - bal.B) * Math.sin(th);
  const leak = 10 ** (c.leakageDbc / 10);
  return 10 * Math.log10((re * re + im * im + leak) / (free === 'AB' ? leak : im * im + leak));
}

/** Follow the guide: set what it says, keep the next steady reading, until it says stop. */
async function follow(t: Sim, trims: string[], max = 30): Promise<{ readings: number; last: unknown }> {
  for (let k = 0; k < max; k++) {
    const next = await t.service.invoke('nextTrial', { trims });
    if (next.stop) {
      await t.service.invoke('setTrims', { trims: next.next });
      return { readings: k, last: next };
    }
    await t.service.invoke('setTrims', { trims: next.next });
    await t.service.invoke('keep', { waitSettled: true });
  }
  throw new Error(`the guide did not stop within ${max} readings`);
}

describe('Service nullFit', () => {
  it('fits a sweep of one trimmer (the other at balance) and recovers the true balance point within its interval', async () => {
    const t = await simSession();
    try {
      const bal = t.sim.bench.tx.trueBalance();
      await t.service.invoke('setTrims', { trims: { B: bal.B } });
      await t.service.invoke('sweep', { trim: 'A', from: 2, to: 7, steps: 15 });
      const f = await t.service.invoke('nullFit', { trims: ['A'] });
      const truth = t.sim.bench.tx.trueBalance().A;
      assert.equal(f.kind, '1d');
      assert.deepEqual(f.keys, ['A']);
      assert.deepEqual(f.held, { B: bal.B });
      assert.equal(f.n, 15);
      const [lo, hi] = f.ci.A;
      assert.ok(lo !== null && hi !== null, 'the interval is closed');
      assert.ok(lo <= truth && truth <= hi, `true balance ${truth.toFixed(4)} outside [${lo}, ${hi}]`);
      assert.ok(hi - lo < 0.1, `interval ${lo}..${hi} is too wide to be of use`);
      // No reading came near the null: the depth is only bounded from above, and the bound holds.
      // The sim's leakage, −64 dBc against one sideband of 24 dBm, puts the null at −40 dBm at the transmitter.
      assert.equal(f.cIsUpperBound, true);
      assert.ok(f.bestDbm >= -41, `bound ${f.bestDbm.toFixed(1)} dBm below the true depth`);
      // The curve is there to draw, with its band around it.
      const curve = f.curves.A;
      assert.ok(curve.length > 200);
      const atBest = curve.reduce((m, p) => (p.dbm < m.dbm ? p : m));
      assert.ok(Math.abs(atBest.x - f.best.A) < 0.01);
      assert.ok(curve.every((p) => p.lo === null || (p.lo <= p.dbm && p.dbm <= p.hi!)));
      // One reading at the fitted null pins the depth down (to the meter's 1 dB steps and the default calibration).
      await t.service.invoke('setTrims', { trims: { A: Number(f.best.A.toFixed(3)) } });
      await t.service.invoke('keep', { waitSettled: true });
      const g = await t.service.invoke('nullFit', { trims: ['A'] });
      assert.equal(g.cIsUpperBound, false);
      assert.ok(Math.abs(g.bestDbm - -40) < 1.5, `depth ${g.bestDbm.toFixed(1)} dBm, the sim's −40 dBm`);
    } finally {
      await t.cleanup();
    }
  });

  it('fits sweeps at several settings of both trimmers in two dimensions, the true null inside its intervals', async () => {
    const t = await simSession('sim:seed=11');
    try {
      for (const b of [3.5, 4.5, 5.5, 6.5]) {
        await t.service.invoke('setTrims', { trims: { B: b } });
        await t.service.invoke('sweep', { trim: 'A', from: 2, to: 7, steps: 6 });
      }
      const f = await t.service.invoke('nullFit', {});
      const truth = t.sim.bench.tx.trueBalance();
      assert.equal(f.kind, '2d');
      assert.equal(f.n, 24);
      for (const [k, v] of [
        ['A', truth.A],
        ['B', truth.B],
      ] as const) {
        const [lo, hi] = f.ci[k];
        assert.ok(
          lo !== null && hi !== null && lo <= v && v <= hi,
          `${k}: true ${v.toFixed(4)} outside [${lo}, ${hi}]`,
        );
      }
      assert.ok(f.map && f.ellipse, 'the map model and the ellipse are there to draw');
      assert.equal(f.collinear, false);
      // The sim's trimmers act 55–90° apart (main/sim/bench.ts); the fit sees them that way.
      const cfg = t.sim.bench.tx.cfg.angleDeg;
      assert.ok(
        Math.abs(f.angleDeg! - cfg) < 15,
        `fitted ${f.angleDeg!.toFixed(1)}°, sim ${cfg.toFixed(1)}°`,
      );
      // JSON carries it whole (it crosses the web shell): no functions, no Infinity.
      assert.deepEqual(JSON.parse(JSON.stringify(f)), f);
    } finally {
      await t.cleanup();
    }
  });

  it('enters readings at the receiver floor as censored bounds, and still finds the null', async () => {
    // 90 dB between transmitter and receiver: at the null the carrier (−40 dBm at the transmitter) sinks
    // below the meter's lowest step (S9 − 54 dB = −127 dBm at the receiver).
    const t = await simSession('sim:seed=5,loss=90', TRIMS, [...PATH, { kind: 'pad', db: 40 }]);
    try {
      const bal = t.sim.bench.tx.trueBalance();
      await t.service.invoke('setTrims', { trims: { B: bal.B } });
      const near = [-0.3, -0.1, -0.03, -0.01, 0, 0.01, 0.03, 0.1, 0.3].map((d) => bal.A + d);
      for (const a of [2, 3, 6, 7, ...near]) {
        await t.service.invoke('setTrims', { trims: { A: a } });
        await t.service.invoke('keep', { waitSettled: true });
      }
      const kept = await t.service.invoke('readings', { sessionId: t.session.id, keptOnly: true });
      const floored = kept.filter((r) => r.floorLimited).length;
      assert.ok(floored >= 1, 'some readings sit on the receiver floor');
      const f = await t.service.invoke('nullFit', { trims: ['A'] });
      assert.equal(f.nCensored, floored);
      assert.equal(f.cIsUpperBound, true, 'the depth is only bounded from above');
      const [lo, hi] = f.ci.A;
      const truth = t.sim.bench.tx.trueBalance().A;
      assert.ok(lo !== null && hi !== null && lo <= truth && truth <= hi, `${truth} outside [${lo}, ${hi}]`);
    } finally {
      await t.cleanup();
    }
  });

  it('uses only the readings taken where the other trimmers are held, and leaves out overloaded ones', async () => {
    const t = await simSession();
    try {
      await t.service.invoke('setTrims', { trims: { B: 5 } });
      await t.service.invoke('sweep', { trim: 'A', from: 2, to: 7, steps: 5 });
      await t.service.invoke('setTrims', { trims: { B: 6 } });
      await t.service.invoke('sweep', { trim: 'A', from: 2, to: 7, steps: 4 });
      const at5 = await t.service.invoke('nullFit', { trims: ['A'], at: { B: 5 } });
      assert.equal(at5.n, 5);
      assert.deepEqual(at5.skipped, { overload: 0, elsewhere: 4 });
      // By default the others are held where they stand now.
      const now = await t.service.invoke('nullFit', { trims: ['A'] });
      assert.equal(now.n, 4);
      assert.deepEqual(now.held, { B: 6 });
      // A later start leaves the earlier readings out.
      const ids = now.readingIds;
      const fresh = await t.service.call('nullFit', { trims: ['A'], sinceId: ids[1] });
      assert.deepEqual(fresh.ok ? null : [fresh.code, fresh.field], ['EINVAL', 'readings']);
    } finally {
      await t.cleanup();
    }
  });

  it('refuses an unknown trimmer, a missing session and too few readings, naming the field', async () => {
    const t = await simSession();
    try {
      const r1 = await t.service.call('nullFit', { trims: ['Q'] });
      assert.deepEqual(r1.ok ? null : [r1.code, r1.field], ['EINVAL', 'trims']);
      assert.match(r1.ok ? '' : r1.message, /no trimmer "Q" in this session \(have A, B\)/);
      const r2 = await t.service.call('nullFit', { trims: ['A'] });
      assert.deepEqual(r2.ok ? null : [r2.code, r2.field], ['EINVAL', 'readings']);
      assert.match(r2.ok ? '' : r2.message, /needs readings at 3 or more different positions/);
      const r3 = await t.service.call('nextTrial', { trims: ['A', 'A'] });
      assert.deepEqual(r3.ok ? null : [r3.code, r3.field], ['EINVAL', 'trims']);
      await t.service.invoke('closeSession', {});
      const r4 = await t.service.call('nextTrial', {});
      assert.deepEqual(r4.ok ? null : [r4.code, r4.field], ['ECONFLICT', 'sessionId']);
      // A closed session can still be fitted by name: where the trimmers stood is the latest reading's.
      const r5 = await t.service.invoke('nextTrial', { sessionId: t.session.id });
      assert.equal(r5.mode, 'survey');
    } finally {
      await t.cleanup();
    }
  });
});

describe('Service nextTrial', () => {
  it('guides one trimmer (the other held near balance) to within 1 dB of its null, then says stop', async () => {
    for (const seed of [3, 8, 21]) {
      const t = await simSession(`sim:seed=${seed}`);
      try {
        const b = Number(t.sim.bench.tx.trueBalance().B.toFixed(3));
        await t.service.invoke('setTrims', { trims: { B: b } });
        const first = await t.service.invoke('nextTrial', { trims: ['A'] });
        assert.equal(first.mode, 'survey');
        assert.equal(first.predictedDbm, null);
        assert.match(first.setText, /^set A to \d+\.\d{3} turns$/);
        const { readings, last } = await follow(t, ['A']);
        const stop = last as Awaited<ReturnType<typeof t.service.invoke<'nextTrial'>>>;
        assert.ok(readings <= 10, `seed ${seed}: ${readings} readings`);
        assert.equal(stop.stop, true);
        assert.equal(stop.mode, 'done');
        assert.match(stop.setText, /^leave A at \d+\.\d{3} turns$/);
        assert.ok(stop.expectedGainDb! < stop.uDb, 'stops when the gain is below the reading uncertainty');
        assert.deepEqual(stop.next.B, b, 'the held trimmer stays where it is');
        const at = t.sim.bench.tx.getTrims();
        const excess = excessDb(t.sim, at.A, at.B, 'A');
        assert.ok(excess <= 1, `seed ${seed}: ${excess.toFixed(2)} dB above the null at A = ${at.A}`);
      } finally {
        await t.cleanup();
      }
    }
  });

  it('guides both trimmers to within 1 dB of the deepest null, with predictions and moves in the user’s units', async () => {
    for (const seed of [4, 17]) {
      const t = await simSession(`sim:seed=${seed}`, [
        { key: 'R', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
        { key: 'C', label: 'Balance C', unit: 'turns', min: 0, max: 10, step: 0.005 },
      ]);
      try {
        // The simulated transmitter knows its trimmers as A and B; this session calls them R and C.
        const src = t.sim;
        const setTrims = src.setTrims.bind(src);
        src.setTrims = (x) => setTrims({ A: x.R, B: x.C });
        await t.service.invoke('setTrims', { trims: { R: 5, C: 5 } });
        let n = 0;
        let trial = await t.service.invoke('nextTrial', {});
        let sawPrediction = false;
        while (!trial.stop && n < 30) {
          assert.deepEqual(trial.keys, ['R', 'C']);
          assert.match(trial.setText, /^set R to \d+\.\d{3} turns, C to \d+\.\d{3} turns$/);
          if (trial.predictedDbm !== null) {
            sawPrediction = true;
            assert.ok(
              trial.band && trial.band[0]! < trial.predictedDbm && trial.predictedDbm < trial.band[1]!,
            );
            assert.match(
              trial.turnText,
              /^(turn R [+−]\d+\.\d{3} turns(, C [+−]\d+\.\d{3} turns)?|turn C [+−]\d+\.\d{3} turns)/,
            );
            assert.match(trial.reason, /\bR \d+\.\d{3}, C \d+\.\d{3}|^set |^probe /);
          }
          await t.service.invoke('setTrims', { trims: trial.next });
          await t.service.invoke('keep', { waitSettled: true });
          n++;
          trial = await t.service.invoke('nextTrial', {});
        }
        assert.ok(trial.stop, `seed ${seed}: no stop after ${n} readings`);
        assert.ok(n <= 20, `seed ${seed}: ${n} readings`);
        assert.ok(sawPrediction);
        assert.equal(trial.fit?.kind, '2d');
        await t.service.invoke('setTrims', { trims: trial.next });
        const at = t.sim.bench.tx.getTrims();
        const excess = excessDb(t.sim, at.A, at.B, 'AB');
        assert.ok(excess <= 1, `seed ${seed}: ${excess.toFixed(2)} dB above the deepest null`);
      } finally {
        await t.cleanup();
      }
    }
  });

  it('refuses a trimmer step larger than its travel, naming it', async () => {
    const t = await simSession('sim:seed=5', [
      { key: 'A', label: 'R', unit: 'turns', min: 0, max: 1, step: 2 },
    ]);
    try {
      const r = await t.service.call('nextTrial', {});
      assert.deepEqual(r.ok ? null : [r.code, r.field], ['EINVAL', 'session.trims[0].step']);
    } finally {
      await t.cleanup();
    }
  });
});
