// Runs anywhere (app/ is runtime-free). The one-trimmer null fit.
//
// Near balance the residual carrier's amplitude is linear in the trimmer position x, so its power is
//   P(x) = a²·(x − x0)² + c²        (mW)
// where c² is the part the trimmer cannot cancel (leakage, an unbalanced quadrature component).
// The receiver adds its own floor F as power, so a reading is modelled as 10·log10(P(x) + F) dBm.
// Fitted in dB (the receiver's noise and ripple are roughly constant in dB) with a robust loss, over
// the parameters θ = [x0, A = 10·log10(a²), C = 10·log10(c²)]; the logs keep a² and c² positive and
// put the very different scales of a deep null on an even footing.

import { BenchError, check } from '../errors';
import { levenbergMarquardt, normalEquations, type LmResult, type Residuals } from './lm';
import { covariance, dot, linearLeastSquares, matVec, type Mat } from './linalg';
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
import { floorBound } from './profile';
import { coverageFactor, keptScatter, lowest, highest } from './stats';

export interface Reading1D {
  /** Trimmer position in the user's unit (turns, degrees, steps). */
  position: number;
  /** Receiver reading, dBm. */
  dbm: number;
  /** True when the reading was at the receiver's floor (the carrier was at most this). */
  censored?: boolean;
}

export type Fit1DOptions = FitOptions;

/** What a design criterion needs from a fit (the guide uses it to pick the next reading). */
export interface FitDesign {
  /** Fitted parameters, in the fit's own order and units. */
  params: number[];
  /** Their covariance, already scaled by sigmaDb² (directions the data leave open get a large finite variance). */
  covariance: Mat;
  /** Standard uncertainty of one reading used for the intervals, dB. */
  sigmaDb: number;
  /** Robust cost at the optimum, ½·Σ f²·ρ((rᵢ/f)²), dB². */
  cost: number;
}

export interface NullFit1D {
  kind: '1d';
  /** Slope of the residual carrier amplitude, √mW per position unit (≥ 0). */
  a: number;
  /** Fitted balance position, in the position unit. */
  x0: number;
  /** Power of the carrier the trimmer cannot cancel, c², dBm (an upper bound when cIsUpperBound). */
  cDbm: number;
  /**
   * True when the data only bound c² from above (it sinks below the measurement floor, or no reading came
   * close enough to the null): the profile likelihood cannot rule out a c² 60 dB lower. cDbm is then the
   * one-sided profile bound at `level`.
   */
  cIsUpperBound: boolean;
  /** The measurement floor the fit assumed, dBm, or null. */
  floorDbm: number | null;
  /** The setting to leave the trimmer at: the fitted balance position. */
  bestPosition: number;
  /** Predicted carrier power at bestPosition (the floor the trimmer cannot cancel), dBm. */
  bestDbm: number;
  /** Predicted receiver reading at bestPosition: carrier plus measurement floor, dBm (a bound when cIsUpperBound). */
  bestReadingDbm: number;
  /** Confidence interval on bestPosition at `level` (±Infinity when the data leave it open). */
  ci: [number, number];
  /** Standard uncertainty of bestPosition, position units. */
  sdPosition: number;
  level: number;
  /** Root-mean-square residual of the uncensored readings, dB. */
  residualDb: number;
  /** Spread of one reading used for the intervals: max(estimated, opts.uDb), dB. */
  sigmaDb: number;
  /** Degrees of freedom of the spread estimate (Infinity when the stated uDb was used). */
  dof: number;
  n: number;
  nCensored: number;
  /** Indices of readings the fit treats as outliers (residual beyond 3·sigmaDb and the loss scale). */
  outliers: number[];
  /** Predicted receiver reading at x (carrier plus measurement floor), dBm. */
  predict(x: number): number;
  /** Predicted carrier power alone at x, dBm. */
  carrier(x: number): number;
  /** Prediction band for a new reading at x, [low, high] dBm, at `level`. */
  band(x: number): [number, number];
  /** dB change of the predicted reading per unit change of each parameter, at x. */
  gradient(x: number): number[];
  design: FitDesign;
}

interface Prepared {
  x: number[];
  c: Classified[];
}

function prepare(readings: readonly Reading1D[], o: ResolvedFitOptions): Prepared {
  check(Array.isArray(readings), 'readings', 'must be an array of { position, dbm } readings');
  const x: number[] = [];
  const c: Classified[] = [];
  readings.forEach((r, i) => {
    check(typeof r === 'object' && r !== null, `readings[${i}]`, 'must be a { position, dbm } reading');
    x.push(checkNumber(r.position, `readings[${i}].position`));
    c.push(classify(checkNumber(r.dbm, `readings[${i}].dbm`), r.censored, o));
  });
  const nUncensored = c.filter((k) => !k.censored).length;
  const distinct = new Set(x).size;
  if (readings.length < 3 || distinct < 3) {
    throw new BenchError(
      'EINVAL',
      `a one-trimmer fit needs readings at 3 or more different positions, got ${readings.length} reading(s) at ${distinct} position(s)`,
      'readings',
    );
  }
  if (nUncensored < 2) {
    throw new BenchError(
      'EINVAL',
      nUncensored === 0
        ? 'every reading is at the measurement floor: the null cannot be located; take readings further from it'
        : 'only one reading is above the measurement floor: take readings further from the null on both sides',
      'readings',
    );
  }
  return { x, c };
}

/** Residuals in dB and their Jacobian for θ = [x0, A, C]. */
function residuals1D(p: Prepared, floorMw: number): (t: readonly number[]) => Residuals {
  return ([x0, A, C]) => {
    const a2 = dbmToMw(A);
    const c2 = dbmToMw(C);
    const r: number[] = [];
    const J: number[][] = [];
    for (let i = 0; i < p.x.length; i++) {
      const d = p.x[i] - x0;
      const k = p.c[i];
      const m = a2 * d * d + c2 + (k.censored ? 0 : floorMw);
      const v = DB_PER_NP * Math.log(m) - (k.censored ? k.boundDbm : k.dbm);
      if (k.censored && v <= 0) {
        r.push(0);
        J.push([0, 0, 0]);
        continue;
      }
      r.push(v);
      J.push([(DB_PER_NP * -2 * a2 * d) / m, (a2 * d * d) / m, c2 / m]);
    }
    return { r, J };
  };
}

/** Parabola P = α·x² + β·x + γ through (x, P) in the least-squares sense, as [x0, a², c²], or null. */
function parabolaStart(xs: number[], ps: number[], cMin: number): number[] | null {
  if (new Set(xs).size < 3) return null;
  const xm = xs.reduce((s, v) => s + v, 0) / xs.length;
  const xsd = Math.sqrt(xs.reduce((s, v) => s + (v - xm) ** 2, 0) / xs.length) || 1;
  const t = xs.map((v) => (v - xm) / xsd);
  const beta = linearLeastSquares(
    t.map((v) => [1, v, v * v]),
    ps,
  );
  if (!beta || !(beta[2] > 0)) return null;
  const [g, b, a] = beta;
  const tv = -b / (2 * a);
  return [xm + xsd * tv, a / (xsd * xsd), Math.max(g - (b * b) / (4 * a), cMin)];
}

/** Several starting points from the data; the fit keeps the one that ends lowest. */
function starts(p: Prepared, o: ResolvedFitOptions, cMinMw: number): number[][] {
  const idx = p.x.map((_, i) => i).filter((i) => !p.c[i].censored);
  const xs = idx.map((i) => p.x[i]);
  const ps = idx.map((i) => Math.max(dbmToMw(p.c[i].dbm) - o.floorMw, cMinMw));
  const out: number[][] = [];
  const whole = parabolaStart(xs, ps, cMinMw);
  if (whole) out.push(whole);
  // The lowest reading and its nearest neighbours: a parabola there ignores far-off outliers.
  const kBest = ps.indexOf(lowest(ps));
  const near = xs
    .map((x, j) => ({ x, j }))
    .sort((u, v) => Math.abs(u.x - xs[kBest]) - Math.abs(v.x - xs[kBest]))
    .slice(0, 5)
    .map((u) => u.j);
  const local = parabolaStart(
    near.map((j) => xs[j]),
    near.map((j) => ps[j]),
    cMinMw,
  );
  if (local) out.push(local);
  // A V with its point at the lowest reading, slope from the median of the others.
  const slopes = xs
    .map((x, j) => (x !== xs[kBest] ? ps[j] / (x - xs[kBest]) ** 2 : NaN))
    .filter(Number.isFinite)
    .sort((u, v) => u - v);
  if (slopes.length > 0) {
    const a2 = slopes[Math.floor(slopes.length / 2)];
    const c2 = Math.max(ps[kBest] / 2, cMinMw);
    out.push([xs[kBest], a2, c2]);
    const sorted = [...new Set(p.x)].sort((u, v) => u - v);
    const at = sorted.indexOf(xs[kBest]);
    if (at > 0) out.push([(sorted[at - 1] + xs[kBest]) / 2, a2, c2]);
    if (at < sorted.length - 1) out.push([(sorted[at + 1] + xs[kBest]) / 2, a2, c2]);
  }
  return out.map(([x0, a2, c2]) => [x0, mwToDbm(a2), mwToDbm(c2)]);
}

/**
 * Fit the one-trimmer null to (position, level) readings.
 * @param readings at least 3 readings at 3 different positions, at least 2 of them above the floor
 * @throws BenchError EINVAL for malformed or too few readings (the field names the reading)
 */
export function fitNull1D(readings: readonly Reading1D[], opts?: Fit1DOptions): NullFit1D {
  const o = resolveFitOptions(opts, 'fitNull1D');
  const p = prepare(readings, o);
  const values = p.c.map((k) => (k.censored ? k.boundDbm : k.dbm));
  const yMin = lowest(values);
  const yMax = highest(values);
  const xMin = lowest(p.x);
  const xMax = highest(p.x);
  const span = xMax - xMin;
  const cLowDbm = (o.floorDbm ?? yMin) - 100;
  const lower = [xMin - 100 * span, -400, cLowDbm];
  const upper = [xMax + 100 * span, 400, yMax + 20];
  const fn = residuals1D(p, o.floorMw);
  let best: LmResult | null = null;
  for (const s of starts(p, o, dbmToMw(cLowDbm))) {
    const r = levenbergMarquardt(fn, s, { loss: o.loss, fScale: o.lossScaleDb, lower, upper });
    if (!best || r.cost < best.cost) best = r;
  }
  if (!best)
    throw new BenchError(
      'EINVAL',
      'no starting point for the fit could be formed from the readings',
      'readings',
    );
  return summarise(p, o, best, fn);
}

function summarise(
  p: Prepared,
  o: ResolvedFitOptions,
  lm: LmResult,
  fn: (t: readonly number[]) => Residuals,
): NullFit1D {
  const [x0, A, C] = lm.params;
  const a2 = dbmToMw(A);
  const c2 = dbmToMw(C);
  const res = fn(lm.params);
  const { h } = normalEquations(res, lm.weights);
  const usedAt = (i: number) => !p.c[i].censored || res.r[i] !== 0;
  const used = p.c.filter((_, i) => usedAt(i)).length;
  const dofFit = used - 3;
  const sHat = dofFit >= 1 ? Math.sqrt((2 * lm.cost) / dofFit) : NaN;
  const estimated = Number.isFinite(sHat) && sHat > o.uDb;
  const robustSigma = estimated ? sHat : o.uDb > 0 ? o.uDb : NaN;
  // Outliers are flagged against the robust scatter; the scatter stated (and every interval) then comes
  // from the readings kept, so flagged readings no longer widen it.
  const outliers = res.r
    .map((v, i) =>
      !p.c[i].censored && Math.abs(v) > 3 * (robustSigma || 0) && Math.abs(v) > o.lossScaleDb ? i : -1,
    )
    .filter((i) => i >= 0);
  const { sigmaDb, dof } = keptScatter(
    res.r,
    usedAt,
    outliers,
    3,
    o.uDb,
    robustSigma,
    estimated ? dofFit : Infinity,
  );
  const k = coverageFactor(o.level, dof);
  const { cov, undetermined } = covariance(h, Number.isFinite(sigmaDb) ? sigmaDb ** 2 : 1);
  const sd = (j: number): number =>
    undetermined[j] || !Number.isFinite(sigmaDb) ? Infinity : Math.sqrt(cov[j][j]);

  const uncensored = res.r.filter((_, i) => !p.c[i].censored);
  const residualDb = Math.sqrt(uncensored.reduce((s, v) => s + v * v, 0) / uncensored.length);

  // When c² is not pinned down, say how loud it could be: the one-sided profile bound at `level`.
  const { open: cIsUpperBound, bound } = floorBound(fn, lm, 2, o, sigmaDb, sd(2));
  const cDbm = cIsUpperBound ? bound : C;

  const predict = (x: number): number => mwToDbm(a2 * (x - x0) ** 2 + c2 + o.floorMw);
  const carrier = (x: number): number => mwToDbm(a2 * (x - x0) ** 2 + c2);
  const gradient = (x: number): number[] => {
    const d = x - x0;
    const m = a2 * d * d + c2 + o.floorMw;
    return [(DB_PER_NP * -2 * a2 * d) / m, (a2 * d * d) / m, c2 / m];
  };
  const band = (x: number): [number, number] => {
    const g = gradient(x);
    const half = k * Math.sqrt(dot(g, matVec(cov, g)) + sigmaDb ** 2);
    const y = predict(x);
    return Number.isFinite(half) ? [y - half, y + half] : [-Infinity, Infinity];
  };
  const sdX = sd(0);
  return {
    kind: '1d',
    a: Math.sqrt(a2),
    x0,
    cDbm,
    cIsUpperBound,
    floorDbm: o.floorDbm,
    bestPosition: x0,
    bestDbm: cDbm,
    bestReadingDbm: cIsUpperBound ? mwToDbm(dbmToMw(cDbm) + o.floorMw) : predict(x0),
    ci: Number.isFinite(sdX) ? [x0 - k * sdX, x0 + k * sdX] : [-Infinity, Infinity],
    sdPosition: sdX,
    level: o.level,
    residualDb,
    sigmaDb,
    dof,
    n: p.x.length,
    nCensored: p.c.filter((c) => c.censored).length,
    outliers,
    predict,
    carrier,
    band,
    gradient,
    design: { params: lm.params.slice(), covariance: cov, sigmaDb, cost: lm.cost },
  };
}
