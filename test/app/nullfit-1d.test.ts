// One-trimmer null fit: recovery of known parameters from synthetic benches (invented for the test),
// robustness to outliers, censoring at the receiver floor, and the honesty of its intervals.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { fitNull1D } from '../../app/nullfit/fit1d';
import { BenchError } from '../../app/errors';
import { reading1D, sample1D, type Bench1D } from './nullfit-helpers';

const range = (from: number, to: number, n: number): number[] =>
  Array.from({ length: n }, (_, i) => from + ((to - from) * i) / (n - 1));
const powerSum = (...dbm: number[]): number => 10 * Math.log10(dbm.reduce((s, d) => s + 10 ** (d / 10), 0));

/** A trimmer of 10 turns; 0.02 √mW/turn puts the ends ~−22 dBm, the leakage floor at −75 dBm. */
const BENCH: Bench1D = { a: 0.02, x0: 4.137, cDbm: -75, floorDbm: -100 };
/** Positions that bracket the null and come close to it: the V and its rounded bottom are both seen. */
const POSITIONS = [...range(3.5, 4.8, 14), 4.12, 4.13, 4.14, 4.15];

describe('fitNull1D()', () => {
  it('recovers a, x0 and c² exactly from noise-free readings', () => {
    const f = fitNull1D(sample1D(BENCH, POSITIONS, 0, 1), { floorDbm: -100 });
    assert.ok(Math.abs(f.x0 - BENCH.x0) < 1e-7, `x0 ${f.x0}`);
    assert.ok(Math.abs(f.a - BENCH.a) < 1e-7 * BENCH.a, `a ${f.a}`);
    assert.ok(Math.abs(f.cDbm - BENCH.cDbm) < 1e-5, `c ${f.cDbm} dBm`);
    assert.equal(f.cIsUpperBound, false);
    assert.equal(f.bestPosition, f.x0);
    assert.ok(Math.abs(f.bestDbm - BENCH.cDbm) < 1e-5, 'Math.abs(f.bestDbm - BENCH.cDbm) < 1e-5');
    // The reading at the null is the leakage plus the receiver's floor (power sum).
    assert.ok(
      Math.abs(f.bestReadingDbm - powerSum(-75, -100)) < 1e-5,
      'Math.abs(f.bestReadingDbm - powerSum(-75, -100)) < 1e-5',
    );
    assert.ok(f.residualDb < 1e-6, 'f.residualDb < 1e-6');
  });

  it('recovers them within their intervals from readings with 0.3 dB noise', () => {
    const f = fitNull1D(sample1D(BENCH, POSITIONS, 0.3, 2), { floorDbm: -100 });
    assert.ok(f.ci[0] < BENCH.x0 && BENCH.x0 < f.ci[1], `x0 ${BENCH.x0} outside [${f.ci}]`);
    assert.ok(f.ci[1] - f.ci[0] < 0.02, `interval ${f.ci[1] - f.ci[0]} turns is too wide for this data`);
    assert.ok(Math.abs(f.a / BENCH.a - 1) < 0.05, `a ${f.a}`);
    assert.ok(Math.abs(f.cDbm - BENCH.cDbm) < 1.5, `c ${f.cDbm} dBm`);
    assert.ok(f.residualDb > 0.15 && f.residualDb < 0.45, `rms ${f.residualDb} dB for 0.3 dB noise`);
  });

  it('shrugs off outliers with the robust loss, and names them', () => {
    const readings = sample1D(BENCH, POSITIONS, 0.2, 3);
    readings[2].dbm += 12; // a knock on the bench
    readings[10].dbm -= 9; // a dropout on the far flank
    const clean = fitNull1D(sample1D(BENCH, POSITIONS, 0.2, 3), { floorDbm: -100 });
    const robust = fitNull1D(readings, { floorDbm: -100 });
    const plain = fitNull1D(readings, { floorDbm: -100, loss: 'linear' });
    // The robust fit stays with what the same readings say without the two bad ones; least squares does not.
    assert.ok(
      Math.abs(robust.x0 - clean.x0) < 0.5 * clean.sdPosition,
      `robust x0 ${robust.x0}, clean ${clean.x0}`,
    );
    assert.ok(Math.abs(plain.x0 - clean.x0) > 4 * Math.abs(robust.x0 - clean.x0), `plain x0 ${plain.x0}`);
    assert.ok(Math.abs(robust.cDbm - clean.cDbm) < 0.2, `robust c ${robust.cDbm} dBm, clean ${clean.cDbm}`);
    assert.deepEqual(robust.outliers, [2, 10]);
  });

  it('treats readings at the receiver floor as censored and bounds the floor it cannot see', () => {
    // Leakage 20 dB below the receiver's floor: the bottom of the V is invisible.
    const deep: Bench1D = { a: 0.02, x0: 6.25, cDbm: -110, floorDbm: -90 };
    const readings = sample1D(deep, [...range(5.6, 6.9, 14), 6.2496, 6.2498, 6.25, 6.2502, 6.2504], 0.2, 4);
    const f = fitNull1D(readings, { floorDbm: -90 });
    assert.ok(f.nCensored >= 2, `${f.nCensored} censored`);
    assert.ok(Math.abs(f.x0 - deep.x0) < 0.002, `x0 ${f.x0}`);
    assert.equal(f.cIsUpperBound, true);
    // The bound must hold (the true leakage is below it) and mean something (no higher than the floor).
    assert.ok(f.cDbm >= deep.cDbm && f.cDbm <= -90 + 1, `bound ${f.cDbm} dBm`);
  });

  it('takes explicitly flagged readings as upper bounds, not as values', () => {
    const readings = sample1D(BENCH, POSITIONS, 0, 5);
    // Say the meter bottomed out at −60 dBm: mark those readings and clamp them there.
    const clipped = readings.map((r) => (r.dbm < -60 ? { ...r, dbm: -60, censored: true } : r));
    const asBound = fitNull1D(clipped);
    const asValue = fitNull1D(clipped.map((r) => ({ position: r.position, dbm: r.dbm })));
    assert.ok(Math.abs(asBound.x0 - BENCH.x0) < 1e-4, `x0 ${asBound.x0}`);
    assert.ok(asBound.cDbm <= -60 + 1e-6, `censored fit put the leakage at ${asBound.cDbm} dBm`);
    // Read as values, the clipped readings would fake a −60 dBm floor.
    assert.ok(Math.abs(asValue.cDbm - -60) < 3, `uncensored fit: ${asValue.cDbm} dBm`);
  });

  it('separates the leakage from the receiver floor when the floor is given', () => {
    // Leakage 2 dB above the receiver floor: the readings at the null show their power sum.
    const b: Bench1D = { a: 0.02, x0: 4.137, cDbm: -78, floorDbm: -80 };
    const readings = sample1D(b, POSITIONS, 0, 6);
    const withFloor = fitNull1D(readings, { floorDbm: -80 });
    const without = fitNull1D(readings);
    assert.ok(Math.abs(withFloor.cDbm - -78) < 0.01, `with floor: ${withFloor.cDbm}`);
    // Without it, the fit can only report the sum it sees (computed: −78 dBm ⊕ −80 dBm = −75.88 dBm).
    assert.ok(Math.abs(without.cDbm - powerSum(-78, -80)) < 0.01, `without floor: ${without.cDbm}`);
  });

  it('gives 95 % intervals that hold the true position about 95 % of the time', () => {
    let hits = 0;
    const runs = 200;
    for (let seed = 100; seed < 100 + runs; seed++) {
      const f = fitNull1D(sample1D(BENCH, POSITIONS, 0.3, seed), { floorDbm: -100, loss: 'linear', uDb: 0 });
      if (f.ci[0] <= BENCH.x0 && BENCH.x0 <= f.ci[1]) hits++;
    }
    // Binomial(200, 0.95): 2.5 standard deviations either side is 177..199.
    assert.ok(hits >= 177 && hits <= 199, `${hits} of ${runs} intervals held x0`);
  });

  it('predicts readings and a band around them', () => {
    const f = fitNull1D(sample1D(BENCH, POSITIONS, 0.3, 7), { floorDbm: -100 });
    for (const x of [3.6, 4.0, 4.137, 4.3, 4.7]) {
      const [lo, hi] = f.band(x);
      const y = f.predict(x);
      assert.ok(lo < y && y < hi, `band at ${x}`);
      assert.ok(
        hi - lo > 2 * 1.96 * f.sigmaDb * 0.99,
        'a prediction band is at least as wide as one reading’s spread',
      );
      assert.ok(Math.abs(y - reading1D(BENCH, x)) < Math.max(1.5, (hi - lo) / 2), `prediction at ${x}: ${y}`);
      assert.ok(f.carrier(x) <= y, 'the carrier alone is never above carrier plus floor');
    }
  });

  it('refuses too few readings, all-censored readings and malformed input, naming what is wrong', () => {
    const two = [
      { position: 1, dbm: -30 },
      { position: 2, dbm: -40 },
    ];
    assert.throws(
      () => fitNull1D(two),
      (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && /3 or more/.test(e.message),
    );
    const same = [1, 1, 1].map((p) => ({ position: p, dbm: -40 }));
    assert.throws(
      () => fitNull1D(same),
      (e: unknown) => e instanceof BenchError && /1 position/.test(e.message),
    );
    const floor = [1, 2, 3].map((p) => ({ position: p, dbm: -95 }));
    assert.throws(
      () => fitNull1D(floor, { floorDbm: -95 }),
      (e: unknown) =>
        e instanceof BenchError &&
        e.code === 'EINVAL' &&
        /every reading is at the measurement floor/.test(e.message),
    );
    const nan = [...two, { position: 3, dbm: NaN }];
    assert.throws(
      () => fitNull1D(nan),
      (e: unknown) => e instanceof BenchError && e.field === 'readings[2].dbm',
    );
    assert.throws(
      () => fitNull1D(sample1D(BENCH, POSITIONS, 0, 1), { lossScaleDb: -1 }),
      (e: unknown) => e instanceof BenchError && e.field === 'fitNull1D.opts.lossScaleDb',
    );
  });
});
