// The numerical helpers under the null fits, checked against numpy and scipy (Debian python3-numpy,
// python3-scipy via /usr/bin/python3) and against exact small cases.
import { describe, it, before } from 'node:test';
import assert from 'node:assert/strict';
import { cholesky, choleskySolve, covariance, linearLeastSquares, symEigen } from '../../app/nullfit/linalg';
import { levenbergMarquardt } from '../../app/nullfit/lm';
import {
  coverageFactor,
  ellipseRadius2,
  lnGamma,
  normalQuantile,
  studentTQuantile,
} from '../../app/nullfit/stats';
import { SIGMA_POINTS } from '../../app/nullfit/guide';
import { rng, runPython } from './nullfit-helpers';

const T_CASES: [number, number][] = [
  [0.975, 1],
  [0.975, 2],
  [0.975, 3],
  [0.975, 7.5],
  [0.975, 30],
  [0.995, 4],
  [0.9, 12],
  [0.6, 2],
  [0.025, 5],
];
const F_CASES: [number, number][] = [
  [0.95, 1],
  [0.95, 4],
  [0.95, 24],
  [0.99, 10],
  [0.68, 3],
];

interface Ref {
  t: number[];
  norm: number[];
  ellipse: number[];
  chi2: number;
  hermite: { x: number[]; w: number[] };
  gammaln: number[];
  eigh: { values: number[]; vectors: number[][] };
  lstsq: number[];
}

const SCRIPT = String.raw`
import json, sys
import numpy as np
from scipy import stats, special
d = json.load(sys.stdin)
x, w = np.polynomial.hermite_e.hermegauss(5)
vals, vecs = np.linalg.eigh(np.array(d['sym']))
print(json.dumps({
  't': [float(stats.t.ppf(p, k)) for p, k in d['t']],
  'norm': [float(stats.norm.ppf(p)) for p in d['norm']],
  'ellipse': [float(2 * stats.f.ppf(p, 2, k)) for p, k in d['f']],
  'chi2': float(stats.chi2.ppf(0.95, 2)),
  'hermite': {'x': x.tolist(), 'w': (w / w.sum()).tolist()},
  'gammaln': [float(special.gammaln(v)) for v in d['gamma']],
  'eigh': {'values': vals.tolist(), 'vectors': vecs.T.tolist()},
  'lstsq': np.linalg.lstsq(np.array(d['X']), np.array(d['y']), rcond=None)[0].tolist(),
}))
`;

const SYM = [
  [4, 1, -2, 0.5],
  [1, 3, 0.25, 0],
  [-2, 0.25, 5, 1],
  [0.5, 0, 1, 2],
];
const g = rng(5);
const X = Array.from({ length: 12 }, () => [1, g.uniform() * 4, g.uniform() * 4 - 2]);
const Y = X.map((r) => 0.3 + 1.7 * r[1] - 0.4 * r[2] + 0.05 * g.gauss());

describe('nullfit numerical helpers against numpy/scipy', () => {
  let ref: Ref;
  before(() => {
    ref = runPython<Ref>(SCRIPT, {
      t: T_CASES,
      norm: [0.975, 0.95, 0.5, 0.999, 0.1],
      f: F_CASES,
      gamma: [0.5, 1, 3.7, 10, 171.3],
      sym: SYM,
      X,
      y: Y,
    });
  });

  it('studentTQuantile() matches scipy.stats.t.ppf', () => {
    T_CASES.forEach(([p, k], i) => {
      // Source: scipy.stats.t.ppf (Debian python3-scipy).
      assert.ok(
        Math.abs(studentTQuantile(p, k) - ref.t[i]) < 1e-9 * Math.max(1, Math.abs(ref.t[i])),
        `t(${p}, ${k})`,
      );
    });
  });

  it('normalQuantile() matches scipy.stats.norm.ppf', () => {
    [0.975, 0.95, 0.5, 0.999, 0.1].forEach((p, i) => {
      // Source: scipy.stats.norm.ppf (Debian python3-scipy).
      assert.ok(Math.abs(normalQuantile(p) - ref.norm[i]) < 1e-10, `z(${p})`);
    });
    assert.ok(
      Math.abs(coverageFactor(0.95, Infinity) - ref.norm[0]) < 1e-10,
      'Math.abs(coverageFactor(0.95, Infinity) - ref.norm[0]) < 1e-10',
    );
    assert.ok(
      Math.abs(coverageFactor(0.95, 3) - ref.t[2]) < 1e-9,
      'Math.abs(coverageFactor(0.95, 3) - ref.t[2]) < 1e-9',
    );
  });

  it('ellipseRadius2() is 2·F(2, ν) from scipy.stats.f.ppf, and χ²(2) for infinite ν', () => {
    F_CASES.forEach(([p, k], i) => {
      // Source: scipy.stats.f.ppf (Debian python3-scipy), times 2.
      assert.ok(Math.abs(ellipseRadius2(p, k) - ref.ellipse[i]) < 1e-9 * ref.ellipse[i], `F(${p}, 2, ${k})`);
    });
    // Source: scipy.stats.chi2.ppf(0.95, 2) = 5.991.
    assert.ok(
      Math.abs(ellipseRadius2(0.95, Infinity) - ref.chi2) < 1e-12,
      'Math.abs(ellipseRadius2(0.95, Infinity) - ref.chi2) < 1e-12',
    );
  });

  it('lnGamma() matches scipy.special.gammaln', () => {
    [0.5, 1, 3.7, 10, 171.3].forEach((v, i) => {
      // Source: scipy.special.gammaln (Debian python3-scipy).
      assert.ok(
        Math.abs(lnGamma(v) - ref.gammaln[i]) < 1e-12 * Math.max(1, Math.abs(ref.gammaln[i])),
        `lnΓ(${v})`,
      );
    });
  });

  it('SIGMA_POINTS are the 5-point Gauss–Hermite rule of numpy.polynomial.hermite_e.hermegauss', () => {
    SIGMA_POINTS.forEach(({ z, w }, i) => {
      // Source: numpy.polynomial.hermite_e.hermegauss(5), weights normalised to 1 (Debian python3-numpy).
      assert.ok(Math.abs(z - ref.hermite.x[i]) < 1e-12, 'Math.abs(z - ref.hermite.x[i]) < 1e-12');
      assert.ok(Math.abs(w - ref.hermite.w[i]) < 1e-12, 'Math.abs(w - ref.hermite.w[i]) < 1e-12');
    });
    // A quadrature exact to degree 9: E[z⁴] = 3 for a unit normal.
    assert.ok(
      Math.abs(SIGMA_POINTS.reduce((s, { z, w }) => s + w * z ** 4, 0) - 3) < 1e-12,
      'Math.abs(SIGMA_POINTS.reduce((s, { z, w }) => s + w * z ** 4, 0) - 3) < 1e-12',
    );
  });

  it('symEigen() matches numpy.linalg.eigh', () => {
    const { values, vectors } = symEigen(SYM);
    values.forEach((v, i) => {
      // Source: numpy.linalg.eigh (Debian python3-numpy).
      assert.ok(Math.abs(v - ref.eigh.values[i]) < 1e-12, `λ${i}`);
      // Eigenvectors agree up to sign.
      const dot = vectors[i].reduce((s, x, k) => s + x * ref.eigh.vectors[i][k], 0);
      assert.ok(Math.abs(Math.abs(dot) - 1) < 1e-12, `v${i}`);
    });
  });

  it('linearLeastSquares() matches numpy.linalg.lstsq', () => {
    const beta = linearLeastSquares(X, Y)!;
    // Source: numpy.linalg.lstsq (Debian python3-numpy).
    beta.forEach((b, i) => assert.ok(Math.abs(b - ref.lstsq[i]) < 1e-10, `β${i}`));
  });
});

describe('nullfit linear algebra', () => {
  it('cholesky() solves a positive definite system and refuses an indefinite one', () => {
    const l = cholesky(SYM)!;
    const x = choleskySolve(l, [1, 2, 3, 4]);
    const back = SYM.map((row) => row.reduce((s, v, j) => s + v * x[j], 0));
    back.forEach((v, i) => assert.ok(Math.abs(v - [1, 2, 3, 4][i]) < 1e-12, `row ${i}: ${v}`));
    assert.equal(
      cholesky([
        [1, 2],
        [2, 1],
      ]),
      null,
    );
  });

  it('covariance() inverts a well-posed information matrix and flags a direction the data leave open', () => {
    const { cov, undetermined } = covariance(
      [
        [4, 0],
        [0, 0.25],
      ],
      2,
    );
    assert.deepEqual(undetermined, [false, false]);
    assert.ok(
      Math.abs(cov[0][0] - 0.5) < 1e-12 && Math.abs(cov[1][1] - 8) < 1e-12,
      'Math.abs(cov[0][0] - 0.5) < 1e-12 && Math.abs(cov[1][1] - 8) < 1e-12',
    );
    // Two parameters that only ever appear as their sum: the difference is not determined.
    const open = covariance(
      [
        [1, 1, 0],
        [1, 1, 0],
        [0, 0, 3],
      ],
      1,
    );
    assert.deepEqual(open.undetermined, [true, true, false]);
    assert.ok(Number.isFinite(open.cov[0][0]), 'the returned matrix stays finite for design use');
  });
});

describe('levenbergMarquardt()', () => {
  it('solves a linear least-squares problem exactly with the linear loss', () => {
    const fn = (p: readonly number[]) => ({
      r: X.map((row, i) => p[0] * row[0] + p[1] * row[1] + p[2] * row[2] - Y[i]),
      J: X.map((row) => row.slice()),
    });
    const r = levenbergMarquardt(fn, [0, 0, 0], { loss: 'linear', fScale: 1 });
    const beta = linearLeastSquares(X, Y)!;
    assert.ok(r.converged, 'r.converged');
    r.params.forEach((v, i) => assert.ok(Math.abs(v - beta[i]) < 1e-9, `p${i}`));
  });

  it('holds a parameter on its bound without bending the others', () => {
    // Minimum of (p0 − 3)² + (p1 − 1)² with p0 ≤ 2: the answer is (2, 1).
    const fn = (p: readonly number[]) => ({
      r: [p[0] - 3, p[1] - 1],
      J: [
        [1, 0],
        [0, 1],
      ],
    });
    const r = levenbergMarquardt(fn, [0, 5], { loss: 'linear', fScale: 1, upper: [2, Infinity] });
    assert.ok(Math.abs(r.params[0] - 2) < 1e-12 && Math.abs(r.params[1] - 1) < 1e-9, `${r.params}`);
  });
});
