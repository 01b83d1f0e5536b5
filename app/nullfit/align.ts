// Runs anywhere (app/ is runtime-free). From a session's kept carrier readings to what the bench shows:
// the null fit against one trimmer (the others held) or two, as plain data that crosses a process
// boundary (no functions, no Infinity), and the guide's next setting as an instruction in the user's units.

import { BenchError, check, isBenchError } from '../errors';
import { fitNull1D, type NullFit1D } from './fit1d';
import { fitNull2D, type NullFit2D } from './fit2d';
import { fixed, moveText, unitSuffix } from './format';
import { DEFAULT_GUIDE_UDB, type TrialMode } from './guide';
import { nextTrial1D } from './guide1d';
import { nextTrial2D } from './guide2d';
import { dbmToMw, mwToDbm } from './readings';
import { lowest, highest } from './stats';

/** What the alignment needs of a stored reading (app/api Reading fits). */
export interface AlignReading {
  id: number;
  role: string;
  /** Level at the transmitter output, dBm. */
  dbmDut: number;
  trims: Record<string, number>;
  /** At the receiver's floor: the carrier is at most this. */
  floorLimited: boolean;
  /** Near overload: the reading may read low, so the fit leaves it out. */
  overload: boolean;
}

/** What the alignment needs of a trimmer definition (app/api TrimDef fits). */
export interface AlignTrim {
  key: string;
  label: string;
  unit: string;
  min: number;
  max: number;
  /** Smallest step the builder can set, in the unit; default 1/2000 of the travel. */
  step?: number;
}

export interface AlignOptions {
  /** Which trimmers to fit: one key (the others held) or two. */
  keys: string[];
  /** Where the other trimmers are held; default `current`. */
  at?: Record<string, number>;
  /** Where the trimmers stand now (for the held ones and for relative moves). */
  current?: Record<string, number>;
  /** Only readings with a larger id count (a fresh start after resoldering or a long break). */
  sinceId?: number;
  /** Measurement floor referred to the transmitter output, dBm; readings within it are censored. */
  floorDbm?: number | null;
  /** Repeatability of one reading, dB > 0: the guide's stop threshold. Default 0.3. */
  uDb?: number;
  /** The step the meter's reading moves in near the null, dB, when known (see Guide1DOptions, Guide2DOptions). */
  meterStepDb?: number;
}

/** A point of a fitted curve: the predicted reading and its prediction band, dBm (band ends null when open). */
export interface CurvePoint {
  x: number;
  dbm: number;
  lo: number | null;
  hi: number | null;
}

/** The two-trimmer model as numbers, so that a view can draw the fitted map itself (see predictMap). */
export interface MapModel {
  a0: number;
  b0: number;
  /** Carrier phasor per unit of each trimmer, √mW per unit. */
  gA: { re: number; im: number };
  gB: { re: number; im: number };
  /** Fitted power no setting cancels, dBm. */
  cDbm: number;
  /** Measurement floor added to every reading, dBm, or null. */
  floorDbm: number | null;
}

export interface NullFitSummary {
  kind: '1d' | '2d';
  /** Fitted trimmers' keys, in order. */
  keys: string[];
  /** Where the other trimmers were held (the readings used were taken there). */
  held: Record<string, number>;
  /** Ids of the readings the fit used, oldest first. */
  readingIds: number[];
  /** Readings left out: near overload, or taken with the other trimmers elsewhere. */
  skipped: { overload: number; elsewhere: number };
  n: number;
  nCensored: number;
  /** The fitted best setting of the fitted trimmers, in their units. */
  best: Record<string, number>;
  /** Confidence interval of each fitted trimmer's best setting at `level`; null ends when open. */
  ci: Record<string, [number | null, number | null]>;
  level: number;
  /** Carrier at the best setting (what no setting cancels), dBm at the transmitter; a bound when cIsUpperBound. */
  bestDbm: number;
  /** Reading expected there (carrier plus floor), dBm. */
  bestReadingDbm: number;
  cIsUpperBound: boolean;
  floorDbm: number | null;
  /** Root-mean-square residual of the uncensored readings, dB, and the spread used for intervals. */
  residualDb: number;
  sigmaDb: number;
  /** Reading ids the fit treats as outliers. */
  outlierIds: number[];
  /** Per fitted trimmer: the fitted curve along it through the best setting of the others, with its band. */
  curves: Record<string, CurvePoint[]>;
  /** Two trimmers: the model, the confidence ellipse, and how the two act on the carrier. */
  map: MapModel | null;
  ellipse: { centerA: number; centerB: number; semiAxes: [number | null, number]; angleRad: number } | null;
  collinear: boolean;
  /** Angle between the trimmers' directions in the carrier's phasor plane, degrees (2-D only). */
  angleDeg: number | null;
}

export interface TrialSummary {
  kind: '1d' | '2d';
  keys: string[];
  held: Record<string, number>;
  /** The setting to try next: every trimmer of the session (the held ones where they are). */
  next: Record<string, number>;
  /** Moves from where the trimmers stand now, for the fitted ones (null when that is not known). */
  moves: Record<string, number> | null;
  /** "set A to 4.370 turns, B to 5.120 turns" */
  setText: string;
  /**
   * "turn A +0.250 turns (a quarter turn clockwise), B −12.0° (about 12° anticlockwise, a little past, then
   * back clockwise)" ('' when where the trimmers stand is not known).
   */
  turnText: string;
  /** Predicted reading at the next setting, dBm at the transmitter, with its band; null while surveying. */
  predictedDbm: number | null;
  band: [number | null, number | null] | null;
  /** Predicted improvement over the best reading so far, dB; null while surveying. */
  expectedGainDb: number | null;
  /** The predicted gain is below the reading uncertainty: leave the trimmers at `next`. */
  stop: boolean;
  mode: TrialMode;
  reason: string;
  /** Lowest kept carrier reading among those used, dBm, or null. */
  bestSeenDbm: number | null;
  uDb: number;
  /** Readings the guide used. */
  n: number;
  /** Steps the guide rounds each fitted trimmer to. */
  resolution: Record<string, number>;
  fit: NullFitSummary | null;
}

interface Selection {
  defs: AlignTrim[];
  others: AlignTrim[];
  held: Record<string, number>;
  used: AlignReading[];
  skipped: { overload: number; elsewhere: number };
  resolution: Record<string, number>;
}

/**
 * The trimmer's settable step: its own, or 1/2000 of the travel.
 * @param field where the trimmer's definition is, for the error ("session.trims[1]")
 */
export function trimStep(t: AlignTrim, field = `trims.${t.key}`): number {
  const span = t.max - t.min;
  if (t.step === undefined) return span / 2000;
  check(
    Number.isFinite(t.step) && t.step > 0 && t.step <= span,
    `${field}.step`,
    `must be above 0 and at most the travel (${span} ${t.unit}), got ${t.step}`,
  );
  return t.step;
}

function select(readings: readonly AlignReading[], trims: readonly AlignTrim[], o: AlignOptions): Selection {
  check(
    Array.isArray(o.keys) && (o.keys.length === 1 || o.keys.length === 2),
    'trims',
    'name one trimmer (the others held) or two',
  );
  check(new Set(o.keys).size === o.keys.length, 'trims', 'name each trimmer once');
  const defs = o.keys.map((k) => {
    const d = trims.find((t) => t.key === k);
    if (!d)
      throw new BenchError(
        'EINVAL',
        `no trimmer "${k}" in this session (have ${trims.map((t) => t.key).join(', ')})`,
        'trims',
      );
    return d;
  });
  const others = trims.filter((t) => !o.keys.includes(t.key));
  const resolution = Object.fromEntries(trims.map((t) => [t.key, trimStep(t)]));
  const carrier = readings.filter(
    (r) =>
      r.role === 'carrier' &&
      (o.sinceId === undefined || r.id > o.sinceId) &&
      defs.every((d) => typeof r.trims[d.key] === 'number'),
  );
  // The others are held where asked, else where they stand now, else where the latest reading had them.
  const latest = carrier[carrier.length - 1];
  const held: Record<string, number> = {};
  for (const t of others) {
    const v = o.at?.[t.key] ?? o.current?.[t.key] ?? latest?.trims[t.key];
    if (typeof v === 'number') held[t.key] = v;
  }
  const skipped = { overload: 0, elsewhere: 0 };
  const used: AlignReading[] = [];
  for (const r of carrier) {
    const there = others.every(
      (t) =>
        held[t.key] === undefined ||
        (typeof r.trims[t.key] === 'number' &&
          Math.abs(r.trims[t.key] - held[t.key]) <= resolution[t.key] / 2),
    );
    if (!there) skipped.elsewhere++;
    else if (r.overload) skipped.overload++;
    else used.push(r);
  }
  return { defs, others, held, used, skipped, resolution };
}

const open = (x: number): number | null => (Number.isFinite(x) ? x : null);

/** Positions to draw a curve at across [lo, hi]: evenly, and densely around a sharp null at x0. */
function curveXs(lo: number, hi: number, x0: number, knee: number): number[] {
  const xs = new Set<number>();
  for (let i = 0; i <= 240; i++) xs.add(lo + ((hi - lo) * i) / 240);
  if (Number.isFinite(knee) && knee > 0 && x0 >= lo && x0 <= hi) {
    xs.add(x0);
    for (let k = -2; k <= 1.5; k += 0.125) {
      const d = knee * 10 ** k;
      if (x0 - d >= lo) xs.add(x0 - d);
      if (x0 + d <= hi) xs.add(x0 + d);
    }
  }
  return [...xs].sort((a, b) => a - b);
}

/** Where a curve along a trimmer is drawn: the readings and the best setting, padded, within the travel. */
function span(t: AlignTrim, xs: number[], best: number): [number, number] {
  const inTravel = [...xs, best].filter((x) => Number.isFinite(x) && x >= t.min && x <= t.max);
  let lo = lowest(inTravel);
  let hi = highest(inTravel);
  const pad = Math.max(0.05 * (hi - lo), (t.max - t.min) / 200);
  lo = Math.max(t.min, lo - pad);
  hi = Math.min(t.max, hi + pad);
  return [lo, hi];
}

function summarise1D(sel: Selection, f: NullFit1D): NullFitSummary {
  const d = sel.defs[0];
  const floorMw = dbmToMw(f.cDbm) + (f.floorDbm === null ? 0 : dbmToMw(f.floorDbm));
  const knee = Math.sqrt(floorMw) / Math.max(f.a, 1e-300);
  const [lo, hi] = span(
    d,
    sel.used.map((r) => r.trims[d.key]),
    f.x0,
  );
  const curve = curveXs(lo, hi, f.x0, knee).map((x) => {
    const [blo, bhi] = f.band(x);
    return { x, dbm: f.predict(x), lo: open(blo), hi: open(bhi) };
  });
  return {
    kind: '1d',
    keys: [d.key],
    held: sel.held,
    readingIds: sel.used.map((r) => r.id),
    skipped: sel.skipped,
    n: f.n,
    nCensored: f.nCensored,
    best: { [d.key]: f.bestPosition },
    ci: { [d.key]: [open(f.ci[0]), open(f.ci[1])] },
    level: f.level,
    bestDbm: f.bestDbm,
    bestReadingDbm: f.bestReadingDbm,
    cIsUpperBound: f.cIsUpperBound,
    floorDbm: f.floorDbm,
    residualDb: f.residualDb,
    sigmaDb: f.sigmaDb,
    outlierIds: f.outliers.map((i) => sel.used[i].id),
    curves: { [d.key]: curve },
    map: null,
    ellipse: null,
    collinear: false,
    angleDeg: null,
  };
}

function summarise2D(sel: Selection, f: NullFit2D): NullFitSummary {
  const [da, db] = sel.defs;
  const [a0, b0, g1, u, v, C] = f.design.params;
  const floorMw = dbmToMw(f.cDbm) + (f.floorDbm === null ? 0 : dbmToMw(f.floorDbm));
  const curveAlong = (which: 0 | 1): CurvePoint[] => {
    const d = sel.defs[which];
    const best = which === 0 ? f.bestA : f.bestB;
    const gain = which === 0 ? Math.sqrt(f.q[0][0]) : Math.sqrt(f.q[1][1]);
    const [lo, hi] = span(
      d,
      sel.used.map((r) => r.trims[d.key]),
      best,
    );
    return curveXs(lo, hi, best, Math.sqrt(floorMw) / Math.max(gain, 1e-300)).map((x) => {
      const a = which === 0 ? x : f.bestA;
      const b = which === 0 ? f.bestB : x;
      const [blo, bhi] = f.band(a, b);
      return { x, dbm: f.predict(a, b), lo: open(blo), hi: open(bhi) };
    });
  };
  return {
    kind: '2d',
    keys: [da.key, db.key],
    held: sel.held,
    readingIds: sel.used.map((r) => r.id),
    skipped: sel.skipped,
    n: f.n,
    nCensored: f.nCensored,
    best: { [da.key]: f.bestA, [db.key]: f.bestB },
    ci: {
      [da.key]: [open(f.ciA[0]), open(f.ciA[1])],
      [db.key]: [open(f.ciB[0]), open(f.ciB[1])],
    },
    level: f.level,
    bestDbm: f.bestDbm,
    bestReadingDbm: f.bestReadingDbm,
    cIsUpperBound: f.cIsUpperBound,
    floorDbm: f.floorDbm,
    residualDb: f.residualDb,
    sigmaDb: f.sigmaDb,
    outlierIds: f.outliers.map((i) => sel.used[i].id),
    curves: { [da.key]: curveAlong(0), [db.key]: curveAlong(1) },
    map: { a0, b0, gA: { re: g1, im: 0 }, gB: { re: u, im: v }, cDbm: C, floorDbm: f.floorDbm },
    ellipse: {
      centerA: f.ellipse.centerA,
      centerB: f.ellipse.centerB,
      semiAxes: [open(f.ellipse.semiAxes[0]), f.ellipse.semiAxes[1]],
      angleRad: f.ellipse.angleRad,
    },
    collinear: f.collinear,
    angleDeg: f.angleDeg,
  };
}

/** The predicted reading at (a, b) of a two-trimmer map model, dBm. */
export function predictMap(m: MapModel, a: number, b: number): number {
  const da = a - m.a0;
  const db = b - m.b0;
  const re = m.gA.re * da + m.gB.re * db;
  const im = m.gA.im * da + m.gB.im * db;
  return mwToDbm(re * re + im * im + dbmToMw(m.cDbm) + (m.floorDbm === null ? 0 : dbmToMw(m.floorDbm)));
}

function fitOptions(o: AlignOptions): { floorDbm?: number; uDb: number } {
  const uDb = o.uDb ?? DEFAULT_GUIDE_UDB;
  return o.floorDbm == null ? { uDb } : { floorDbm: o.floorDbm, uDb };
}

/**
 * Fit the null to a session's kept carrier readings.
 * @throws BenchError EINVAL naming `readings` when there are too few usable readings for the fit
 */
export function fitSession(
  readings: readonly AlignReading[],
  trims: readonly AlignTrim[],
  o: AlignOptions,
): NullFitSummary {
  const sel = select(readings, trims, o);
  const censored = (r: AlignReading): boolean => r.floorLimited;
  if (sel.defs.length === 1) {
    const k = sel.defs[0].key;
    const f = fitNull1D(
      sel.used.map((r) => ({ position: r.trims[k], dbm: r.dbmDut, censored: censored(r) })),
      fitOptions(o),
    );
    return summarise1D(sel, f);
  }
  const [ka, kb] = o.keys;
  const f = fitNull2D(
    sel.used.map((r) => ({ a: r.trims[ka], b: r.trims[kb], dbm: r.dbmDut, censored: censored(r) })),
    fitOptions(o),
  );
  return summarise2D(sel, f);
}

/** The guide's next setting for a session, as an instruction in the user's units. */
export function guideSession(
  readings: readonly AlignReading[],
  trims: readonly AlignTrim[],
  o: AlignOptions,
): TrialSummary {
  const sel = select(readings, trims, o);
  const uDb = o.uDb ?? DEFAULT_GUIDE_UDB;
  const opts = fitOptions(o);
  const censored = (r: AlignReading): boolean => r.floorLimited;
  let next: Record<string, number>;
  let trial: {
    predictedDbm: number | null;
    band: [number, number] | null;
    expectedGainDb: number | null;
    stop: boolean;
    mode: TrialMode;
    reason: string;
  };
  let fit: NullFitSummary | null = null;
  if (sel.defs.length === 1) {
    const d = sel.defs[0];
    const t = nextTrial1D(
      sel.used.map((r) => ({ position: r.trims[d.key], dbm: r.dbmDut, censored: censored(r) })),
      [d.min, d.max],
      { ...opts, resolution: sel.resolution[d.key], meterStepDb: o.meterStepDb },
    );
    next = { [d.key]: t.position };
    trial = t;
    if (t.fit) fit = summarise1D(sel, t.fit);
  } else {
    const [da, db] = sel.defs;
    const t = nextTrial2D(
      sel.used.map((r) => ({ a: r.trims[da.key], b: r.trims[db.key], dbm: r.dbmDut, censored: censored(r) })),
      { a: [da.min, da.max], b: [db.min, db.max] },
      {
        ...opts,
        resolution: { a: sel.resolution[da.key], b: sel.resolution[db.key] },
        names: { a: da.key, b: db.key },
        meterStepDb: o.meterStepDb,
      },
    );
    next = { [da.key]: t.a, [db.key]: t.b };
    trial = t;
    if (t.fit) fit = summarise2D(sel, t.fit);
  }
  // A fit the guide could not make (too few readings) is no error for the guide: it surveys.
  const cur = o.current;
  const known = cur !== undefined && sel.defs.every((d) => typeof cur[d.key] === 'number');
  const moves = known ? Object.fromEntries(sel.defs.map((d) => [d.key, next[d.key] - cur[d.key]])) : null;
  const amount = (d: AlignTrim, x: number): string =>
    `${fixed(x, sel.resolution[d.key])}${unitSuffix(d.unit)}`;
  const setText = trial.stop
    ? `leave ${sel.defs.map((d) => `${d.key} at ${amount(d, next[d.key])}`).join(', ')}`
    : `set ${sel.defs.map((d) => `${d.key} to ${amount(d, next[d.key])}`).join(', ')}`;
  let turnText = '';
  if (moves) {
    const step = (d: AlignTrim): number => sel.resolution[d.key];
    const still = sel.defs.filter((d) => Math.abs(moves[d.key]) < step(d) / 2);
    const turn = sel.defs.filter((d) => !still.includes(d));
    turnText =
      turn.length === 0
        ? `leave ${sel.defs.map((d) => d.key).join(' and ')} where ${sel.defs.length > 1 ? 'they are' : 'it is'}`
        : `turn ${turn.map((d) => `${d.key} ${moveText(moves[d.key], step(d), d.unit)}`).join(', ')}` +
          (still.length ? `; leave ${still.map((d) => d.key).join(' and ')}` : '');
  }
  const usedLevels = sel.used.map((r) => r.dbmDut);
  return {
    kind: sel.defs.length === 1 ? '1d' : '2d',
    keys: sel.defs.map((d) => d.key),
    held: sel.held,
    next: { ...sel.held, ...next },
    moves,
    setText,
    turnText,
    predictedDbm: trial.predictedDbm,
    band: trial.band ? [open(trial.band[0]), open(trial.band[1])] : null,
    expectedGainDb: trial.expectedGainDb,
    stop: trial.stop,
    mode: trial.mode,
    reason: trial.reason,
    bestSeenDbm: usedLevels.length ? lowest(usedLevels) : null,
    uDb,
    n: sel.used.length,
    resolution: Object.fromEntries(sel.defs.map((d) => [d.key, sel.resolution[d.key]])),
    fit,
  };
}

/** True when the error only says the readings do not support a fit yet. */
export function isTooFewReadings(e: unknown): boolean {
  return isBenchError(e) && e.code === 'EINVAL' && e.field === 'readings';
}
