// Runs anywhere (app/ is runtime-free). The two-trimmer null fit.
//
// The residual carrier is a phasor. Each trimmer (say a resistive and a reactive balance) moves it along
// its own complex direction, not necessarily at right angles to the other's:
//   r(a, b) = gA·(a − a0) + gB·(b − b0)          (√mW, complex)
//   P(a, b) = |r|² + c²                           (mW)
// with c² the incoherent part no trimmer setting cancels. Only relative phase matters, so gA is taken
// real and positive (gA = g1), and gB = u + i·v with v ≥ 0 (the mirror image gives the same powers).
// When gA and gB are not collinear the phasor reaches zero at exactly one setting, (a0, b0), which is
// therefore fitted directly: θ = [a0, b0, g1, u, v, C = 10·log10(c²)]. A reading is modelled as
// 10·log10(P + F) dBm with F the receiver's floor, fitted in dB with a robust loss like the 1-D fit.
//
// In the quadratic-form view P − c² = dᵀ·Q·d with d = (a − a0, b − b0) and Q = RᵀR, R = [[g1, u], [0, v]]:
// v = 0 makes Q singular, the null a valley along which the two trimmers trade off.

import { BenchError, check } from '../errors';
import { levenbergMarquardt, normalEquations, type LmResult, type Residuals } from './lm';
import { covariance, dot, linearLeastSquares, matVec, symEigen, zeros, type Mat } from './linalg';
import { floorBound, profileBound } from './profile';
import {
  DB_PER_NP,
  checkNumber,
  classify,
  dbmToMw,
  mwToDbm,
  resolveFitOptions,
  type Classified,
  type FitOptions,
  type ResolvedFitOptions,
} from './readings';
import { coverageFactor, ellipseRadius2, lowest, highest, keptScatter } from './stats';
import type { FitDesign } from './fit1d';

export interface Reading2D {
  /** Position of trimmer A in its unit. */
  a: number;
  /** Position of trimmer B in its unit. */
  b: number;
  /** Receiver reading, dBm. */
  dbm: number;
  /** True when the reading was at the receiver's floor. */
  censored?: boolean;
}

export type Fit2DOptions = FitOptions;

/** Joint confidence region of (bestA, bestB): points d with dᵀ·cov⁻¹·d ≤ k2. */
export interface ConfidenceEllipse {
  centerA: number;
  centerB: number;
  /** Covariance of (bestA, bestB) in the trimmers' units². */
  cov: [[number, number], [number, number]];
  /** Squared radius for `level` (2·F(2, dof) quantile, or χ²(2) when dof is infinite). */
  k2: number;
  /** Semi-axes of the ellipse, major first, in the trimmers' units (Infinity when open). */
  semiAxes: [number, number];
  /** Direction of the major axis, radians from the A axis towards the B axis. */
  angleRad: number;
}

export interface NullFit2D {
  kind: '2d';
  /** Fitted balance setting; for a collinear pair, the point of the null valley nearest the lowest reading. */
  bestA: number;
  bestB: number;
  /** Predicted carrier power at the best setting (the floor no setting cancels), dBm. */
  bestDbm: number;
  /** Predicted receiver reading at the best setting (carrier plus measurement floor), dBm (a bound when cIsUpperBound). */
  bestReadingDbm: number;
  /** Power of the incoherent carrier, c², dBm (an upper bound when cIsUpperBound). */
  cDbm: number;
  /** True when the data only bound c² from above (see NullFit1D.cIsUpperBound). */
  cIsUpperBound: boolean;
  floorDbm: number | null;
  /** Carrier phasor per unit of A (real, ≥ 0) and per unit of B, √mW per unit. */
  gainA: { re: number; im: number };
  gainB: { re: number; im: number };
  /** Angle between the two trimmers' directions in the phasor plane, degrees, 0–180. */
  angleDeg: number;
  /** How far the two directions are from collinear, degrees, 0–90 (90 = at right angles). */
  separationDeg: number;
  /**
   * For a collinear fit: the largest separation the data still allow at `level` (profile likelihood),
   * degrees; a few degrees means the pair really is collinear, more means the valley is not yet
   * explored. For a non-collinear fit: separationDeg.
   */
  separationMaxDeg: number;
  /** True when the data cannot tell the two directions apart: the null is a valley, not a point. */
  collinear: boolean;
  /** Per-axis confidence intervals at `level` (±Infinity when open). */
  ciA: [number, number];
  ciB: [number, number];
  ellipse: ConfidenceEllipse;
  level: number;
  residualDb: number;
  sigmaDb: number;
  dof: number;
  n: number;
  nCensored: number;
  outliers: number[];
  /** Spread of the readings' positions per axis (the scale used to compare the two units). */
  scale: { a: number; b: number };
  /** Predicted receiver reading at (a, b), dBm. */
  predict(a: number, b: number): number;
  /** Predicted carrier alone at (a, b), dBm. */
  carrier(a: number, b: number): number;
  /** Prediction band for a new reading at (a, b), [low, high] dBm. */
  band(a: number, b: number): [number, number];
  /** dB change of the predicted reading per unit change of each parameter, at (a, b). */
  gradient(a: number, b: number): number[];
  /** The best setting nearest to (a, b): the fitted null, or for a collinear pair the nearest valley point. */
  nearestBest(a: number, b: number): { a: number; b: number };
  /** Quadratic form Q of P − c² in the trimmers' units, mW per unit². */
  q: [[number, number], [number, number]];
  design: Design2D;
}

export interface Design2D extends FitDesign {
  /**
   * For a collinear fit, the parameters of the least collinear model the data still allow (the
   * profile bound of v): a rival hypothesis whose null is a point somewhere along the valley.
   */
  rival: number[] | null;
  /** Predicted reading at (a, b) under a parameter vector of this fit (e.g. the rival), dBm. */
  predictWith(params: readonly number[], a: number, b: number): number;
}

interface Prepared {
  a: number[];
  b: number[];
  c: Classified[];
}

function prepare(readings: readonly Reading2D[], o: ResolvedFitOptions): Prepared {
  check(Array.isArray(readings), 'readings', 'must be an array of { a, b, dbm } readings');
  const p: Prepared = { a: [], b: [], c: [] };
  readings.forEach((r, i) => {
    check(typeof r === 'object' && r !== null, `readings[${i}]`, 'must be an { a, b, dbm } reading');
    p.a.push(checkNumber(r.a, `readings[${i}].a`));
    p.b.push(checkNumber(r.b, `readings[${i}].b`));
    p.c.push(classify(checkNumber(r.dbm, `readings[${i}].dbm`), r.censored, o));
  });
  const nUncensored = p.c.filter((k) => !k.censored).length;
  const distinct = new Set(p.a.map((a, i) => `${a},${p.b[i]}`)).size;
  if (distinct < 6) {
    throw new BenchError(
      'EINVAL',
      `a two-trimmer fit needs readings at 6 or more different settings, got ${readings.length} reading(s) at ${distinct} setting(s)`,
      'readings',
    );
  }
  if (new Set(p.a).size < 2 || new Set(p.b).size < 2) {
    throw new BenchError(
      'EINVAL',
      'both trimmers must have been moved: readings vary only one of them',
      'readings',
    );
  }
  if (nUncensored < 3) {
    throw new BenchError(
      'EINVAL',
      `only ${nUncensored} reading(s) are above the measurement floor: take readings further from the null`,
      'readings',
    );
  }
  return p;
}

function residuals2D(p: Prepared, floorMw: number): (t: readonly number[]) => Residuals {
  return ([a0, b0, g1, u, v, C]) => {
    const c2 = dbmToMw(C);
    const r: number[] = [];
    const J: number[][] = [];
    for (let i = 0; i < p.a.length; i++) {
      const da = p.a[i] - a0;
      const db = p.b[i] - b0;
      const re = g1 * da + u * db;
      const im = v * db;
      const k = p.c[i];
      const m = re * re + im * im + c2 + (k.censored ? 0 : floorMw);
      const val = DB_PER_NP * Math.log(m) - (k.censored ? k.boundDbm : k.dbm);
      if (k.censored && val <= 0) {
        r.push(0);
        J.push([0, 0, 0, 0, 0, 0]);
        continue;
      }
      const s = (2 * DB_PER_NP) / m;
      r.push(val);
      J.push([-s * re * g1, -s * (re * u + im * v), s * re * da, s * re * db, s * im * db, c2 / m]);
    }
    return { r, J };
  };
}

/** [a0, b0, g1, u, v, c²] from a quadratic form (units²), a centre and c², with Q made positive definite. */
function fromQuadratic(q: Mat, a0: number, b0: number, c2: number): number[] {
  const { values, vectors } = symEigen(q);
  const top = Math.max(values[1], 1e-300);
  const lam = values.map((l) => Math.max(l, 1e-4 * top));
  const qq = [0, 1].map((i) =>
    [0, 1].map((j) => lam[0] * vectors[0][i] * vectors[0][j] + lam[1] * vectors[1][i] * vectors[1][j]),
  );
  const g1 = Math.sqrt(qq[0][0]);
  const u = qq[0][1] / g1;
  const v = Math.sqrt(Math.max(qq[1][1] - u * u, 1e-8 * qq[1][1]));
  return [a0, b0, g1, u, v, c2];
}

/** Least-squares quadric in linear power; returns a start or null when it cannot be formed. */
function quadricStart(
  p: Prepared,
  idx: number[],
  ps: number[],
  cMin: number,
  sa: number,
  sb: number,
): number[] | null {
  if (idx.length < 6) return null;
  const ma = idx.reduce((s, i) => s + p.a[i], 0) / idx.length;
  const mb = idx.reduce((s, i) => s + p.b[i], 0) / idx.length;
  const rows = idx.map((i) => {
    const x = (p.a[i] - ma) / sa;
    const y = (p.b[i] - mb) / sb;
    return [1, x, y, x * x, x * y, y * y];
  });
  const k = linearLeastSquares(rows, ps);
  if (!k) return null;
  const qs = [
    [k[3], k[4] / 2],
    [k[4] / 2, k[5]],
  ];
  const det = qs[0][0] * qs[1][1] - qs[0][1] * qs[0][1];
  const q = [
    [qs[0][0] / (sa * sa), qs[0][1] / (sa * sb)],
    [qs[0][1] / (sa * sb), qs[1][1] / (sb * sb)],
  ];
  if (!(qs[0][0] > 0 && det > 0)) return null;
  // Centre of the bowl: ∇ = 0  ⇒  x = −½·Qs⁻¹·k_lin (scaled units).
  const x = -(qs[1][1] * k[1] - qs[0][1] * k[2]) / (2 * det);
  const y = -(qs[0][0] * k[2] - qs[0][1] * k[1]) / (2 * det);
  const c2 = Math.max(k[0] + (k[1] * x + k[2] * y) / 2, cMin);
  return fromQuadratic(q, ma + sa * x, mb + sb * y, c2);
}

function starts(p: Prepared, o: ResolvedFitOptions, cMin: number, sa: number, sb: number): number[][] {
  const idx = p.a.map((_, i) => i).filter((i) => !p.c[i].censored);
  const psAll = p.c.map((k) => Math.max(dbmToMw(k.dbm) - o.floorMw, cMin));
  const ps = idx.map((i) => psAll[i]);
  const out: number[][] = [];
  const whole = quadricStart(p, idx, ps, cMin, sa, sb);
  if (whole) out.push(whole);
  const iBest = idx[ps.indexOf(lowest(ps))];
  const dist = (i: number): number => ((p.a[i] - p.a[iBest]) / sa) ** 2 + ((p.b[i] - p.b[iBest]) / sb) ** 2;
  if (idx.length > 8) {
    const near = idx
      .slice()
      .sort((i, j) => dist(i) - dist(j))
      .slice(0, 8);
    const local = quadricStart(
      p,
      near,
      near.map((i) => psAll[i]),
      cMin,
      sa,
      sb,
    );
    if (local) out.push(local);
  }
  // Bowls centred on the lowest reading: round (in units of the spread) and, if known, the fitted shape.
  const slopes = idx
    .filter((i) => i !== iBest && dist(i) > 0)
    .map((i) => psAll[i] / dist(i))
    .sort((x, y) => x - y);
  const qIso = slopes.length ? slopes[Math.floor(slopes.length / 2)] : 1e-6;
  const cBest = Math.max(psAll[iBest] / 2, cMin);
  out.push(
    fromQuadratic(
      [
        [qIso / (sa * sa), 0],
        [0, qIso / (sb * sb)],
      ],
      p.a[iBest],
      p.b[iBest],
      cBest,
    ),
  );
  if (whole) out.push([p.a[iBest], p.b[iBest], whole[2], whole[3], whole[4], cBest]);
  return out.map((s) => [s[0], s[1], s[2], s[3], s[4], mwToDbm(s[5])]);
}

/**
 * Covariance of the valley model: only one anchor coordinate, g1, u and C are free (the other anchor
 * coordinate is held, v is 0), so the inverse is taken over those four and the rest get no variance. Inverting the full matrix instead would mix
 * the unbounded spread along the valley into the direction across it by rounding.
 */
function valleyCovariance(h: Mat, sigma2: number, holdB: boolean): { cov: Mat; undetermined: boolean[] } {
  const free = [holdB ? 0 : 1, 2, 3, 5];
  const r = covariance(
    free.map((i) => free.map((j) => h[i][j])),
    sigma2,
  );
  const cov = zeros(6, 6);
  free.forEach((i, a) => free.forEach((j, b) => (cov[i][j] = r.cov[a][b])));
  const undetermined = new Array<boolean>(6).fill(true);
  free.forEach((i, a) => (undetermined[i] = r.undetermined[a]));
  return { cov, undetermined };
}

/** Carrier power at (a, b) for θ = [a0, b0, g1, u, v, C], mW. */
function carrierMw([a0, b0, g1, u, v, C]: readonly number[], a: number, b: number): number {
  const re = g1 * (a - a0) + u * (b - b0);
  const im = v * (b - b0);
  return re * re + im * im + dbmToMw(C);
}

/** Index of the lowest reading (censored ones by their bound). */
function lowestIndex(p: Prepared): number {
  return p.c.map((c, i) => ({ v: c.censored ? c.boundDbm : c.dbm, i })).reduce((m, x) => (x.v < m.v ? x : m))
    .i;
}

function spread(xs: number[]): number {
  const m = xs.reduce((s, v) => s + v, 0) / xs.length;
  return Math.sqrt(xs.reduce((s, v) => s + (v - m) ** 2, 0) / xs.length) || 1;
}

/**
 * Fit the two-trimmer null to scattered (a, b, level) readings.
 * @param readings at least 6 readings at 6 different settings, both trimmers moved, 3 above the floor
 * @throws BenchError EINVAL for malformed or too few readings
 */
export function fitNull2D(readings: readonly Reading2D[], opts?: Fit2DOptions): NullFit2D {
  const o = resolveFitOptions(opts, 'fitNull2D');
  const p = prepare(readings, o);
  const sa = spread(p.a);
  const sb = spread(p.b);
  const values = p.c.map((k) => (k.censored ? k.boundDbm : k.dbm));
  const cLowDbm = (o.floorDbm ?? lowest(values)) - 100;
  const lower = [-Infinity, -Infinity, -Infinity, -Infinity, -Infinity, cLowDbm];
  const upper = [Infinity, Infinity, Infinity, Infinity, Infinity, highest(values) + 20];
  const fn = residuals2D(p, o.floorMw);
  let best: LmResult | null = null;
  for (const s of starts(p, o, dbmToMw(cLowDbm), sa, sb)) {
    const r = levenbergMarquardt(fn, s, {
      loss: o.loss,
      fScale: o.lossScaleDb,
      lower,
      upper,
      maxIterations: 300,
    });
    if (!best || r.cost < best.cost) best = r;
  }
  if (!best)
    throw new BenchError(
      'EINVAL',
      'no starting point for the fit could be formed from the readings',
      'readings',
    );
  // Put the solution in its canonical form (g1 ≥ 0, v ≥ 0); powers are unchanged by the flips.
  const [a0, b0, g1, u, v, C] = best.params;
  const flip = g1 < 0 ? -1 : 1;
  const params = [a0, b0, flip * g1, flip * u, Math.abs(v), C];
  const r = fn(params);
  const full = summarise(p, o, { ...best, params, r: r.r, J: r.J }, fn, sa, sb, null);
  if (full) return full;
  // The data cannot tell the directions apart: refit the collinear model itself (v = 0), so that the
  // valley it reports is flat as claimed. Only g1·a0 + u·b0 matters then, so one coordinate of the
  // anchor point is held: at the lowest reading, so that the other one measures where the valley
  // runs among the readings (an anchor far away would turn every error of the slope into a shift).
  const [a0f, b0f, g1f, uf] = params;
  const iLow = lowestIndex(p);
  const holdB = Math.abs(g1f) * sa >= 1e-3 * Math.abs(uf) * sb;
  const anchor = holdB
    ? [g1f !== 0 ? a0f - (uf * (p.b[iLow] - b0f)) / g1f : p.a[iLow], p.b[iLow]]
    : [p.a[iLow], b0f - (g1f * (p.a[iLow] - a0f)) / uf];
  const free = holdB ? 0 : 1;
  const full6 = (t: readonly number[]): number[] =>
    holdB ? [t[0], anchor[1], t[1], t[2], 0, t[3]] : [anchor[0], t[0], t[1], t[2], 0, t[3]];
  const reduced = (t: readonly number[]): Residuals => {
    const res = fn(full6(t));
    return { r: res.r, J: res.J.map((row) => [row[free], row[2], row[3], row[5]]) };
  };
  const red = levenbergMarquardt(reduced, [anchor[free], g1f, uf, params[5]], {
    loss: o.loss,
    fScale: o.lossScaleDb,
    lower: [-Infinity, -Infinity, -Infinity, cLowDbm],
    upper: [Infinity, Infinity, Infinity, upper[5]],
    maxIterations: 300,
  });
  const line = full6(red.params);
  if (line[2] < 0) {
    line[2] = -line[2];
    line[3] = -line[3];
  }
  const rl = fn(line);
  return summarise(p, o, { ...red, params: line, r: rl.r, J: rl.J }, fn, sa, sb, { holdB })!;
}

function summarise(
  p: Prepared,
  o: ResolvedFitOptions,
  lm: LmResult,
  fn: (t: readonly number[]) => Residuals,
  sa: number,
  sb: number,
  valleyFit: { holdB: boolean } | null,
): NullFit2D | null {
  const valleyModel = valleyFit !== null;
  const [a0, b0, g1, u, v, C] = lm.params;
  const c2 = dbmToMw(C);
  const { h } = normalEquations(lm, lm.weights);
  const usedAt = (i: number) => !p.c[i].censored || lm.r[i] !== 0;
  const used = p.c.filter((_, i) => usedAt(i)).length;
  // The valley model has four free parameters (one anchor coordinate, g1, u, C; the other is held, v is 0).
  const nParams = valleyModel ? 4 : 6;
  const dofFit = used - nParams;
  const sHat = dofFit >= 1 ? Math.sqrt((2 * lm.cost) / dofFit) : NaN;
  const estimated = Number.isFinite(sHat) && sHat > o.uDb;
  const robustSigma = estimated ? sHat : o.uDb > 0 ? o.uDb : NaN;
  // Outliers are flagged against the robust scatter; the scatter stated (and every interval) then comes
  // from the readings kept, so flagged readings no longer widen it.
  const outliers = lm.r
    .map((x, i) =>
      !p.c[i].censored && Math.abs(x) > 3 * (robustSigma || 0) && Math.abs(x) > o.lossScaleDb ? i : -1,
    )
    .filter((i) => i >= 0);
  const { sigmaDb, dof } = keptScatter(
    lm.r,
    usedAt,
    outliers,
    nParams,
    o.uDb,
    robustSigma,
    estimated ? dofFit : Infinity,
  );
  const k = coverageFactor(o.level, dof);
  const { cov, undetermined } = valleyModel
    ? valleyCovariance(h, Number.isFinite(sigmaDb) ? sigmaDb ** 2 : 1, valleyFit.holdB)
    : covariance(h, Number.isFinite(sigmaDb) ? sigmaDb ** 2 : 1);
  const sd = (j: number): number =>
    undetermined[j] || !Number.isFinite(sigmaDb) ? Infinity : Math.sqrt(cov[j][j]);

  const q: [[number, number], [number, number]] = [
    [g1 * g1, g1 * u],
    [g1 * u, u * u + v * v],
  ];
  const gbAbs = Math.hypot(u, v);
  const sinAngle = gbAbs > 0 && g1 > 0 ? v / gbAbs : 0;
  const collinear =
    valleyModel || !Number.isFinite(sd(0)) || !Number.isFinite(sd(1)) || !(v > 2 * sd(4)) || sinAngle < 1e-3;
  // Collinear under the full model: the caller refits the valley model and summarises that instead.
  if (collinear && !valleyModel) return null;

  const valley = symEigen(q).vectors[0];
  // Nearest valley point, measured in units of each axis' spread so that turns and degrees compare.
  const nearestBest = (a: number, b: number): { a: number; b: number } => {
    if (!collinear) return { a: a0, b: b0 };
    const na = valley[0] / sa;
    const nb = valley[1] / sb;
    const t = (na * ((a - a0) / sa) + nb * ((b - b0) / sb)) / (na * na + nb * nb);
    return { a: a0 + t * valley[0], b: b0 + t * valley[1] };
  };
  const iLow = lowestIndex(p);
  const best = nearestBest(p.a[iLow], p.b[iLow]);

  const predictMw = (a: number, b: number): number => carrierMw(lm.params, a, b);
  const predict = (a: number, b: number): number => mwToDbm(predictMw(a, b) + o.floorMw);
  const carrier = (a: number, b: number): number => mwToDbm(predictMw(a, b));
  const gradient = (a: number, b: number): number[] => {
    const da = a - a0;
    const db = b - b0;
    const re = g1 * da + u * db;
    const im = v * db;
    const m = re * re + im * im + c2 + o.floorMw;
    const s = (2 * DB_PER_NP) / m;
    return [-s * re * g1, -s * (re * u + im * v), s * re * da, s * re * db, s * im * db, c2 / m];
  };
  const band = (a: number, b: number): [number, number] => {
    const g = gradient(a, b);
    const half = k * Math.sqrt(dot(g, matVec(cov, g)) + sigmaDb ** 2);
    const y = predict(a, b);
    return Number.isFinite(half) ? [y - half, y + half] : [-Infinity, Infinity];
  };

  // A collinear pair leaves the position along the valley open, whatever the linearised numbers say.
  const open = collinear || !Number.isFinite(sd(0)) || !Number.isFinite(sd(1));
  const ciOf = (x: number, s: number): [number, number] =>
    !open && Number.isFinite(s) ? [x - k * s, x + k * s] : [-Infinity, Infinity];
  const block: [[number, number], [number, number]] = [
    [cov[0][0], cov[0][1]],
    [cov[1][0], cov[1][1]],
  ];
  const k2 = ellipseRadius2(o.level, dof);
  const eig = symEigen(block);
  // Open: the major axis runs along the valley; across it the width stays finite.
  const major = open ? valley : eig.vectors[1];
  const across = [-major[1], major[0]];
  const acrossVar = dot(across, matVec(block, across));
  const ellipse: ConfidenceEllipse = {
    centerA: best.a,
    centerB: best.b,
    cov: block,
    k2,
    semiAxes: open
      ? [Infinity, Math.sqrt(k2 * Math.max(acrossVar, 0))]
      : [Math.sqrt(k2 * eig.values[1]), Math.sqrt(k2 * Math.max(eig.values[0], 0))],
    angleRad: Math.atan2(major[1], major[0]),
  };

  const separationDeg = (Math.atan2(v, Math.abs(u)) * 180) / Math.PI;
  let rival: number[] | null = null;
  let separationMaxDeg = separationDeg;
  if (collinear) {
    const scale = gbAbs > 0 ? gbAbs : (g1 * sa) / sb;
    const bound = profileBound(fn, lm, 4, o, sigmaDb, 1, 0.05 * scale, 0.002 * scale, 100 * scale);
    rival = bound.params;
    separationMaxDeg = (Math.atan2(bound.value, Math.abs(bound.params[3])) * 180) / Math.PI;
  }

  const { open: cIsUpperBound, bound } = floorBound(fn, lm, 5, o, sigmaDb, sd(5));
  const cDbm = cIsUpperBound ? bound : C;
  const uncensored = lm.r.filter((_, i) => !p.c[i].censored);
  const residualDb = Math.sqrt(uncensored.reduce((s, x) => s + x * x, 0) / uncensored.length);
  return {
    kind: '2d',
    bestA: best.a,
    bestB: best.b,
    bestDbm: cDbm,
    bestReadingDbm: cIsUpperBound ? mwToDbm(dbmToMw(cDbm) + o.floorMw) : predict(best.a, best.b),
    cDbm,
    cIsUpperBound,
    floorDbm: o.floorDbm,
    gainA: { re: g1, im: 0 },
    gainB: { re: u, im: v },
    angleDeg: (Math.atan2(v, u) * 180) / Math.PI,
    separationDeg,
    separationMaxDeg,
    collinear,
    ciA: ciOf(best.a, sd(0)),
    ciB: ciOf(best.b, sd(1)),
    ellipse,
    level: o.level,
    residualDb,
    sigmaDb,
    dof,
    n: p.a.length,
    nCensored: p.c.filter((c) => c.censored).length,
    outliers,
    scale: { a: sa, b: sb },
    predict,
    carrier,
    band,
    gradient,
    nearestBest,
    q,
    design: {
      params: lm.params.slice(),
      covariance: cov,
      sigmaDb,
      cost: lm.cost,
      rival,
      predictWith: (t, a, b) => mwToDbm(carrierMw(t, a, b) + o.floorMw),
    },
  };
}
