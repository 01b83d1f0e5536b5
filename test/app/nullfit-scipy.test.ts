// The null fits against the reference library: scipy.optimize.least_squares (Debian python3-scipy) on
// the same data, model, robust loss and censoring rule, started from its own guess.
import { describe, it, before } from 'node:test';
import assert from 'node:assert/strict';
import { fitNull1D, type NullFit1D, type Reading1D } from '../../app/nullfit/fit1d';
import { fitNull2D, type NullFit2D, type Reading2D } from '../../app/nullfit/fit2d';
import type { Loss } from '../../app/nullfit/lm';
import { SCIPY_FIT, polar, runPython, sample1D, sample2D, rng } from './nullfit-helpers';

const SOURCE = 'scipy.optimize.least_squares (Debian python3-scipy)';

interface Case1D {
  name: string;
  readings: Reading1D[];
  floorDbm: number | null;
  loss: Loss;
}
interface Case2D {
  name: string;
  readings: Reading2D[];
  floorDbm: number | null;
  loss: Loss;
}
interface ScipyResult {
  params: number[];
  cost: number;
  status: number;
  cov?: number[][];
  t975?: number;
}

const range = (from: number, to: number, n: number): number[] =>
  Array.from({ length: n }, (_, i) => from + ((to - from) * i) / (n - 1));

function cases1D(): Case1D[] {
  const bench = { a: 0.02, x0: 3.37, cDbm: -78, floorDbm: -95 };
  const outliers = sample1D(bench, range(2.6, 4.2, 21), 0.25, 11);
  outliers[4].dbm += 9;
  outliers[15].dbm -= 6;
  const deep = { a: 0.03, x0: 5.02, cDbm: -97, floorDbm: -85 };
  return [
    { name: 'noise and two outliers, soft-L1 loss', readings: outliers, floorDbm: -95, loss: 'soft_l1' },
    { name: 'noise and two outliers, Huber loss', readings: outliers, floorDbm: -95, loss: 'huber' },
    {
      name: 'a null below the receiver floor (censored readings)',
      readings: sample1D(deep, [...range(4.5, 5.5, 15), 5.0, 5.01, 5.018, 5.02, 5.022, 5.03, 5.04], 0.2, 12),
      floorDbm: -85,
      loss: 'soft_l1',
    },
    {
      name: 'plain noise, linear loss, no floor given',
      readings: sample1D({ a: 0.5, x0: -12.47, cDbm: -40, floorDbm: null }, range(-12.8, -12.2, 13), 0.3, 13),
      floorDbm: null,
      loss: 'linear',
    },
  ];
}

function cases2D(): Case2D[] {
  const g = rng(21);
  const pts = (n: number, a: [number, number], b: [number, number]): [number, number][] =>
    Array.from({ length: n }, () => [a[0] + (a[1] - a[0]) * g.uniform(), b[0] + (b[1] - b[0]) * g.uniform()]);
  const k35 = { a0: 4.2, b0: 130, gA: polar(0.01, 10), gB: polar(0.0003, 45), cDbm: -80, floorDbm: -100 };
  const k120 = { a0: -1.5, b0: 0.4, gA: polar(0.05, 0), gB: polar(0.08, 120), cDbm: -72, floorDbm: -90 };
  // Scattered readings plus a few close to the null, where the floor c² shows.
  const near = (k: { a0: number; b0: number }, da: number, db: number): [number, number][] =>
    [-1, 0, 1].flatMap((i) => [-1, 0, 1].map((j): [number, number] => [k.a0 + i * da, k.b0 + j * db]));
  const withOutliers = sample2D(
    k120,
    [...pts(30, [-2.5, -0.5], [-0.4, 1.2]), ...near(k120, 0.004, 0.003)],
    0.25,
    22,
  );
  withOutliers[3].dbm += 8;
  withOutliers[20].dbm -= 7;
  return [
    {
      name: 'directions 35° apart, soft-L1',
      readings: sample2D(k35, [...pts(24, [3.6, 4.8], [90, 170]), ...near(k35, 0.01, 0.4)], 0.2, 23),
      floorDbm: -100,
      loss: 'soft_l1',
    },
    {
      name: 'directions 120° apart, two outliers, Huber',
      readings: withOutliers,
      floorDbm: -90,
      loss: 'huber',
    },
    {
      name: 'directions 35° apart, linear loss',
      readings: sample2D(k35, [...pts(20, [3.6, 4.8], [90, 170]), ...near(k35, 0.01, 0.4)], 0.3, 24),
      floorDbm: null,
      loss: 'linear',
    },
  ];
}

/**
 * The incoherent floor C (dBm) agrees to 0.001 dB where the data fix it; where they only bound it
 * (the fit says so), both optimisers must have sent it at least 10 dB below what the receiver shows.
 */
function sameFloor(open: boolean, ours: number, ref: number, visibleDbm: number): void {
  // Source: scipy.optimize.least_squares (Debian python3-scipy).
  if (Math.abs(ours - ref) < 1e-3) return;
  assert.ok(open, `${SOURCE}: C ${ref} dBm, ours ${ours}`);
  assert.ok(
    ours < visibleDbm - 10 && ref < visibleDbm - 10,
    `${SOURCE}: C ${ref} dBm, ours ${ours}, both should be far below ${visibleDbm}`,
  );
}

function toScipy1D(c: Case1D): unknown {
  return {
    kind: '1d',
    x: c.readings.map((r) => r.position),
    dbm: c.readings.map((r) => r.dbm),
    // The same censoring rule as the fit: at or below the floor plus its 0.5 dB margin.
    censored: c.readings.map((r) => c.floorDbm !== null && r.dbm <= c.floorDbm + 0.5),
    floorDbm: c.floorDbm,
    loss: c.loss,
    fScale: 1,
  };
}

function toScipy2D(c: Case2D): unknown {
  return {
    kind: '2d',
    a: c.readings.map((r) => r.a),
    b: c.readings.map((r) => r.b),
    dbm: c.readings.map((r) => r.dbm),
    censored: c.readings.map((r) => c.floorDbm !== null && r.dbm <= c.floorDbm + 0.5),
    floorDbm: c.floorDbm,
    loss: c.loss,
    fScale: 1,
  };
}

describe('fitNull1D() against scipy.optimize.least_squares', () => {
  const cs = cases1D();
  let ref: ScipyResult[] = [];
  const ours: NullFit1D[] = [];
  before(() => {
    ref = runPython<ScipyResult[]>(SCIPY_FIT, { cases: cs.map(toScipy1D) });
    for (const c of cs)
      ours.push(fitNull1D(c.readings, { floorDbm: c.floorDbm ?? undefined, loss: c.loss, uDb: 0 }));
  });

  cs.forEach((c, i) => {
    it(`reaches the same optimum: ${c.name}`, () => {
      const [x0, A, C] = ref[i].params;
      const f = ours[i];
      const span =
        Math.max(...c.readings.map((r) => r.position)) - Math.min(...c.readings.map((r) => r.position));
      // Source: scipy.optimize.least_squares (Debian python3-scipy), same model, loss and data.
      assert.ok(Math.abs(f.x0 - x0) < 1e-6 * span, `${SOURCE}: x0 ${x0}, ours ${f.x0}`);
      assert.ok(Math.abs(f.a - Math.sqrt(10 ** (A / 10))) < 1e-5 * f.a, `${SOURCE}: a, ours ${f.a}`);
      sameFloor(
        f.cIsUpperBound,
        f.design.params[2],
        C,
        c.floorDbm ?? Math.min(...c.readings.map((r) => r.dbm)),
      );
      assert.ok(
        Math.abs(f.design.cost - ref[i].cost) <= 1e-8 * ref[i].cost,
        `${SOURCE}: cost ${ref[i].cost}, ours ${f.design.cost}`,
      );
    });
  });

  it('gives the same 95 % interval as the Jacobian covariance from scipy, for the linear loss', () => {
    const i = cs.findIndex((c) => c.loss === 'linear');
    const { cov, t975, params } = ref[i];
    const half = t975! * Math.sqrt(cov![0][0]);
    const f = ours[i];
    // Source: scipy.optimize.least_squares Jacobian, s²(JᵀJ)⁻¹, and scipy.stats.t.ppf(0.975, n − 3).
    assert.ok(
      Math.abs(f.ci[0] - (params[0] - half)) < 1e-3 * half,
      `${SOURCE}: low ${params[0] - half}, ours ${f.ci[0]}`,
    );
    assert.ok(
      Math.abs(f.ci[1] - (params[0] + half)) < 1e-3 * half,
      `${SOURCE}: high ${params[0] + half}, ours ${f.ci[1]}`,
    );
  });
});

describe('fitNull2D() against scipy.optimize.least_squares', () => {
  const cs = cases2D();
  let ref: ScipyResult[] = [];
  const ours: NullFit2D[] = [];
  before(() => {
    ref = runPython<ScipyResult[]>(SCIPY_FIT, { cases: cs.map(toScipy2D) });
    for (const c of cs)
      ours.push(fitNull2D(c.readings, { floorDbm: c.floorDbm ?? undefined, loss: c.loss, uDb: 0 }));
  });

  cs.forEach((c, i) => {
    it(`reaches the same optimum: ${c.name}`, () => {
      const [a0, b0, g1, u, v, C] = ref[i].params;
      const f = ours[i];
      const sa = f.scale.a;
      const sb = f.scale.b;
      // Source: scipy.optimize.least_squares (Debian python3-scipy), same model, loss and data.
      assert.ok(Math.abs(f.bestA - a0) < 1e-6 * sa, `${SOURCE}: a0 ${a0}, ours ${f.bestA}`);
      assert.ok(Math.abs(f.bestB - b0) < 1e-6 * sb, `${SOURCE}: b0 ${b0}, ours ${f.bestB}`);
      sameFloor(
        f.cIsUpperBound,
        f.design.params[5],
        C,
        c.floorDbm ?? Math.min(...c.readings.map((r) => r.dbm)),
      );
      // The quadratic form is what the data fix (signs of g1 and v are conventions).
      const q = [g1 * g1, g1 * u, u * u + v * v];
      const ourQ = [f.q[0][0], f.q[0][1], f.q[1][1]];
      assert.ok(
        Math.abs(f.design.cost - ref[i].cost) <= 1e-8 * ref[i].cost,
        `${SOURCE}: cost ${ref[i].cost}, ours ${f.design.cost}`,
      );
      q.forEach((x, j) =>
        assert.ok(
          Math.abs(ourQ[j] - x) < 1e-5 * Math.abs(q[j === 1 ? 0 : j]),
          `${SOURCE}: Q[${j}] ${x}, ours ${ourQ[j]}`,
        ),
      );
    });
  });

  it('gives the same per-axis standard uncertainties as scipy’s Jacobian covariance, for the linear loss', () => {
    const i = cs.findIndex((c) => c.loss === 'linear');
    const { cov, t975 } = ref[i];
    const f = ours[i];
    const halfA = t975! * Math.sqrt(cov![0][0]);
    const halfB = t975! * Math.sqrt(cov![1][1]);
    // Source: scipy.optimize.least_squares Jacobian, s²(JᵀJ)⁻¹, and scipy.stats.t.ppf(0.975, n − 6).
    assert.ok(
      Math.abs((f.ciA[1] - f.ciA[0]) / 2 - halfA) < 1e-3 * halfA,
      `${SOURCE}: A ±${halfA}, ours ±${(f.ciA[1] - f.ciA[0]) / 2}`,
    );
    assert.ok(
      Math.abs((f.ciB[1] - f.ciB[0]) / 2 - halfB) < 1e-3 * halfB,
      `${SOURCE}: B ±${halfB}, ours ±${(f.ciB[1] - f.ciB[0]) / 2}`,
    );
  });
});
