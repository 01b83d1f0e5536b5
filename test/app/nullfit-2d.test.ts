// Two-trimmer null fit and the turn-by instruction: recovery of known phasor directions (not at right
// angles) from scattered synthetic readings (invented for the test), censoring, collinear pairs.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { fitNull2D } from '../../app/nullfit/fit2d';
import { suggestNext2D } from '../../app/nullfit/suggest';
import { BenchError } from '../../app/errors';
import { polar, reading2D, rng, sample2D, type Bench2D } from './nullfit-helpers';

/** Resistive balance in turns (0–10), reactive balance in degrees (0–300); directions 50° apart. */
const BENCH: Bench2D = {
  a0: 4.62,
  b0: 131,
  gA: polar(0.012, 20),
  gB: polar(0.0004, 70),
  cDbm: -82,
  floorDbm: -100,
};

/** Scattered settings over a region around the null, plus a few close to it where c² shows. */
function settings(k: Bench2D, n: number, seed: number): [number, number][] {
  const g = rng(seed);
  const wide = Array.from({ length: n }, (): [number, number] => [
    k.a0 - 1 + 2 * g.uniform(),
    k.b0 - 60 + 120 * g.uniform(),
  ]);
  const close = [-1, 0, 1].flatMap((i) =>
    [-1, 0, 1].map((j): [number, number] => [k.a0 + i * 0.004, k.b0 + j * 0.15]),
  );
  return [...wide, ...close];
}

const angleBetween = (a: [number, number], b: [number, number]): number => {
  const d = (Math.atan2(b[1], b[0]) - Math.atan2(a[1], a[0])) * (180 / Math.PI);
  return ((d % 360) + 360) % 360;
};

describe('fitNull2D()', () => {
  it('recovers the null, both directions and c² exactly from noise-free readings', () => {
    const f = fitNull2D(sample2D(BENCH, settings(BENCH, 20, 1), 0, 1), { floorDbm: -100 });
    assert.ok(Math.abs(f.bestA - BENCH.a0) < 1e-7, `a0 ${f.bestA}`);
    assert.ok(Math.abs(f.bestB - BENCH.b0) < 1e-5, `b0 ${f.bestB}`);
    assert.ok(Math.abs(f.cDbm - BENCH.cDbm) < 1e-4, `c ${f.cDbm}`);
    assert.equal(f.collinear, false);
    // Only relative phase is observable: |gA|, |gB| and the angle between them (50°).
    assert.ok(
      Math.abs(f.gainA.re - 0.012) < 1e-9 && f.gainA.im === 0,
      'Math.abs(f.gainA.re - 0.012) < 1e-9 && f.gainA.im === 0',
    );
    assert.ok(
      Math.abs(Math.hypot(f.gainB.re, f.gainB.im) - 0.0004) < 1e-10,
      'Math.abs(Math.hypot(f.gainB.re, f.gainB.im) - 0.0004) < 1e-10',
    );
    assert.ok(Math.abs(f.angleDeg - angleBetween(BENCH.gA, BENCH.gB)) < 1e-5, `angle ${f.angleDeg}`);
    assert.ok(Math.abs(f.separationDeg - 50) < 1e-5, 'Math.abs(f.separationDeg - 50) < 1e-5');
  });

  it('recovers them within the confidence ellipse from readings with 0.25 dB noise', () => {
    const f = fitNull2D(sample2D(BENCH, settings(BENCH, 30, 2), 0.25, 2), { floorDbm: -100 });
    assert.ok(f.ciA[0] < BENCH.a0 && BENCH.a0 < f.ciA[1], `a0 outside [${f.ciA}]`);
    assert.ok(f.ciB[0] < BENCH.b0 && BENCH.b0 < f.ciB[1], `b0 outside [${f.ciB}]`);
    const [[saa, sab], [, sbb]] = f.ellipse.cov;
    const da = BENCH.a0 - f.bestA;
    const db = BENCH.b0 - f.bestB;
    const det = saa * sbb - sab * sab;
    const m2 = (sbb * da * da - 2 * sab * da * db + saa * db * db) / det;
    assert.ok(m2 < f.ellipse.k2, `true null at Mahalanobis² ${m2} outside k² ${f.ellipse.k2}`);
    assert.ok(Math.abs(f.angleDeg - 50) < 5, `angle ${f.angleDeg}`);
    assert.ok(Math.abs(f.cDbm - BENCH.cDbm) < 1.5, `c ${f.cDbm}`);
    assert.ok(
      f.ellipse.semiAxes[0] >= f.ellipse.semiAxes[1] && f.ellipse.semiAxes[1] > 0,
      'f.ellipse.semiAxes[0] >= f.ellipse.semiAxes[1] && f.ellipse.semiAxes[1] > 0',
    );
  });

  it('gives 95 % ellipses that hold the true null about 95 % of the time', () => {
    let hits = 0;
    const runs = 100;
    for (let seed = 300; seed < 300 + runs; seed++) {
      const f = fitNull2D(sample2D(BENCH, settings(BENCH, 25, seed), 0.3, seed), {
        floorDbm: -100,
        loss: 'linear',
        uDb: 0,
      });
      const [[saa, sab], [, sbb]] = f.ellipse.cov;
      const da = BENCH.a0 - f.bestA;
      const db = BENCH.b0 - f.bestB;
      const m2 = (sbb * da * da - 2 * sab * da * db + saa * db * db) / (saa * sbb - sab * sab);
      if (m2 <= f.ellipse.k2) hits++;
    }
    // Binomial(100, 0.95): 2.5 standard deviations either side is 90..100.
    assert.ok(hits >= 90, `${hits} of ${runs} ellipses held the null`);
  });

  it('treats readings at the floor as censored', () => {
    // Leakage 15 dB under the floor; close readings sit on the floor.
    const deep: Bench2D = { ...BENCH, cDbm: -115, floorDbm: -95 };
    const close = [-1, 0, 1].flatMap((i) =>
      [-1, 0, 1].map((j): [number, number] => [deep.a0 + i * 0.0001, deep.b0 + j * 0.003]),
    );
    const readings = sample2D(deep, [...settings(deep, 25, 3).slice(0, 25), ...close], 0.2, 3);
    const f = fitNull2D(readings, { floorDbm: -95 });
    assert.ok(f.nCensored >= 4, `${f.nCensored} censored`);
    assert.ok(
      Math.abs(f.bestA - deep.a0) < 0.002 && Math.abs(f.bestB - deep.b0) < 0.3,
      `${f.bestA}, ${f.bestB}`,
    );
    assert.equal(f.cIsUpperBound, true);
    assert.ok(f.cDbm >= deep.cDbm && f.cDbm <= -94, `bound ${f.cDbm}`);
  });

  it('says so when both trimmers move the carrier along the same line, and puts the best on the valley', () => {
    // Same phase for both: the null is the line 0.012·(a − a0) + 0.0004·(b − b0) = 0.
    const line: Bench2D = { ...BENCH, gA: polar(0.012, 30), gB: polar(0.0004, 30) };
    let flagged = 0;
    for (let seed = 10; seed < 40; seed++) {
      const f = fitNull2D(sample2D(line, settings(line, 30, seed), 0.1, seed), { floorDbm: -100 });
      // Either way the best setting lies on the valley and is as deep as the valley.
      const offValley = 0.012 * (f.bestA - line.a0) + 0.0004 * (f.bestB - line.b0);
      assert.ok(Math.abs(offValley) < 2e-5, `seed ${seed}: best is ${offValley} √mW off the valley`);
      assert.ok(Math.abs(f.bestDbm - line.cDbm) < 1.5, `seed ${seed}: depth ${f.bestDbm}`);
      if (!f.collinear) {
        assert.ok(f.separationDeg < 3, `seed ${seed}: called ${f.separationDeg}° apart`);
        continue;
      }
      flagged++;
      assert.ok(f.separationMaxDeg < 5, `seed ${seed}: could still be ${f.separationMaxDeg}° apart`);
      assert.ok(!Number.isFinite(f.ciA[0]), 'a point interval along a valley would be false precision');
      // Any point of the valley is about as good: nearestBest() goes straight across to it (1.2 turns
      // and 31° along the valley from the lowest reading here).
      const near = f.nearestBest(5, 100);
      assert.ok(
        Math.abs(f.predict(near.a, near.b) - f.bestReadingDbm) < 3,
        `seed ${seed}: valley point predicts ${f.predict(near.a, near.b)}`,
      );
      const truth = reading2D(line, near.a, near.b) - reading2D(line, line.a0, line.b0);
      assert.ok(truth < 3, `seed ${seed}: the valley point is really ${truth} dB above the null`);
    }
    // "Collinear" is the data failing to show a separation (a 2σ test): about 95 % of the time here.
    assert.ok(flagged >= 26, `flagged collinear in ${flagged} of 30`);
  });

  it('refuses too few settings, a trimmer never moved, and malformed readings', () => {
    const five = sample2D(BENCH, settings(BENCH, 5, 5).slice(0, 5), 0, 5);
    assert.throws(
      () => fitNull2D(five),
      (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && /6 or more/.test(e.message),
    );
    const oneAxis = sample2D(
      BENCH,
      [1, 2, 3, 4, 5, 6, 7].map((a): [number, number] => [a, 100]),
      0,
      5,
    );
    assert.throws(
      () => fitNull2D(oneAxis),
      (e: unknown) => e instanceof BenchError && /both trimmers/.test(e.message),
    );
    const bad = sample2D(BENCH, settings(BENCH, 8, 5), 0, 5);
    bad[4] = { ...bad[4], b: Number.NaN };
    assert.throws(
      () => fitNull2D(bad),
      (e: unknown) => e instanceof BenchError && e.field === 'readings[4].b',
    );
  });
});

describe('suggestNext2D()', () => {
  const f = fitNull2D(sample2D(BENCH, settings(BENCH, 30, 6), 0.2, 6), { floorDbm: -100 });

  it('says which way and how far to turn each trimmer, in the user’s units', () => {
    const s = suggestNext2D(f, { a: 4.27, b: 143 }, { a: 'turns', b: '°' });
    assert.match(s.text, /^turn A \+0\.\d+ turns, B −1\d(\.\d+)?°$/);
    assert.ok(Math.abs(s.a - f.bestA) < 0.01 && Math.abs(s.b - f.bestB) < 1, `${s.a}, ${s.b}`);
    assert.ok(
      Math.abs(s.deltaA - (s.a - 4.27)) < 1e-9 && Math.abs(s.deltaB - (s.b - 143)) < 1e-9,
      'Math.abs(s.deltaA - (s.a - 4.27)) < 1e-9 && Math.abs(s.deltaB - (s.b - 143)) < 1e-9',
    );
    assert.ok(s.gainDb > 20, `gain ${s.gainDb} dB`);
    assert.ok(
      Math.abs(s.predictedDbm - f.predict(s.a, s.b)) < 1e-9,
      'Math.abs(s.predictedDbm - f.predict(s.a, s.b)) < 1e-9',
    );
    assert.equal(s.note, '');
  });

  it('rounds to the digits the fit supports and leaves a trimmer that is already right', () => {
    const s = suggestNext2D(f, { a: f.bestA, b: f.bestB - 7 }, { a: 'turns', b: 'deg' });
    assert.match(s.text, /^turn B \+7(\.\d+)? deg; leave A$/);
    const here = suggestNext2D(f, { a: f.bestA, b: f.bestB });
    assert.equal(here.text, 'leave A and B: they are at the fitted null');
  });

  it('refuses a current setting that is not a number', () => {
    assert.throws(
      () => suggestNext2D(f, { a: Number.NaN, b: 1 }),
      (e: unknown) => e instanceof BenchError && e.field === 'current.a',
    );
  });
});
