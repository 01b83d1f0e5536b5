// The scatter a null fit states once it has flagged outliers (app/nullfit/stats.ts keptScatter): it comes
// from the readings kept, not from the robust cost that still holds the flagged ones. Monte Carlo over
// seeded simulated benches (invented data), each with two gross outliers; the 95 % interval's coverage is
// checked against the nominal level (Student-t intervals, GUM G.3; the fit is validated against
// scipy.optimize.least_squares in nullfit-scipy.test.ts).
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { fitNull1D } from '../../app/nullfit/fit1d';
import { fitNull2D } from '../../app/nullfit/fit2d';
import { keptScatter } from '../../app/nullfit/stats';
import { polar, reading2D, rng, sample1D, type Bench1D } from './nullfit-helpers';

const range = (from: number, to: number, n: number): number[] =>
  Array.from({ length: n }, (_, i) => from + ((to - from) * i) / (n - 1));
const BENCH: Bench1D = { a: 0.02, x0: 4.137, cDbm: -75, floorDbm: -100 };
const POSITIONS = range(3.4, 4.9, 21);
const NOISE_DB = 0.3;

describe('keptScatter', () => {
  it('is the rms of the kept residuals over their degrees of freedom, never below the meter step', () => {
    const r = [0.1, -0.2, 9, 0.3, -0.1, 0.2];
    const s = keptScatter(r, () => true, [2], 2, 0.05, 4, 4);
    // Five kept residuals, two parameters: sqrt((0.01+0.04+0.09+0.01+0.04)/3).
    assert.ok(Math.abs(s.sigmaDb - Math.sqrt(0.19 / 3)) < 1e-12);
    assert.equal(s.dof, 3);
    assert.deepEqual(
      keptScatter(r, () => true, [], 2, 0.05, 4, 4),
      { sigmaDb: 4, dof: 4 },
    );
    assert.deepEqual(
      keptScatter(r, () => true, [2], 2, 1, 4, 4),
      { sigmaDb: 1, dof: Infinity },
    );
  });
});

describe('a null fit with outliers states the scatter of the readings it kept', () => {
  it('one trimmer: σ near the true 0.3 dB, and the 95 % interval covers the null in about 95 % of runs', () => {
    const runs = 300;
    let covered = 0;
    const sigmas: number[] = [];
    for (let seed = 1; seed <= runs; seed++) {
      const readings = sample1D(BENCH, POSITIONS, NOISE_DB, seed);
      readings[3].dbm += 9; // a knock on the bench
      readings[16].dbm -= 6; // a dropout
      const f = fitNull1D(readings, { floorDbm: BENCH.floorDbm ?? undefined });
      assert.ok(f.outliers.includes(3) && f.outliers.includes(16), `seed ${seed}: outliers ${f.outliers}`);
      sigmas.push(f.sigmaDb);
      if (f.ci[0] <= BENCH.x0 && BENCH.x0 <= f.ci[1]) covered++;
    }
    sigmas.sort((a, b) => a - b);
    const median = sigmas[runs >> 1];
    assert.ok(median > 0.24 && median < 0.36, `median σ ${median.toFixed(3)} dB for ${NOISE_DB} dB noise`);
    // Binomial: at 95 % over 300 runs, fewer than 88 % covered happens with probability below 1e-5.
    assert.ok(covered / runs >= 0.88, `covered in ${covered} of ${runs}`);
    // Not wider than it must be either: the flagged readings no longer inflate it (coverage well below 100 %).
    assert.ok(covered / runs <= 0.995, `covered in ${covered} of ${runs}: the interval is too wide`);
  });

  it('two trimmers: σ near the true 0.3 dB despite two outliers', () => {
    const bench = {
      a0: 4.62,
      b0: 131,
      gA: polar(0.012, 0),
      gB: polar(0.0004, 60),
      cDbm: -80,
      floorDbm: -100,
    };
    const sigmas: number[] = [];
    for (let seed = 1; seed <= 40; seed++) {
      const g = rng(seed);
      const pts = Array.from({ length: 40 }, () => [3.8 + 1.6 * g.uniform(), 80 + 100 * g.uniform()]);
      const readings = pts.map(([a, b]) => ({ a, b, dbm: reading2D(bench, a, b) + NOISE_DB * g.gauss() }));
      readings[5].dbm += 9;
      readings[20].dbm -= 7;
      const f = fitNull2D(readings, { floorDbm: bench.floorDbm });
      sigmas.push(f.sigmaDb);
    }
    sigmas.sort((a, b) => a - b);
    const median = sigmas[20];
    assert.ok(median > 0.22 && median < 0.38, `median σ ${median.toFixed(3)} dB for ${NOISE_DB} dB noise`);
  });
});
