// Runs anywhere (app/ is runtime-free). Guided alignment of two trimmers: the next setting to try.

import { check, isBenchError } from '../errors';
import { fitNull2D, type NullFit2D, type Reading2D } from './fit2d';
import { db, dbm, fixed, roundTo } from './format';
import {
  SIGMA_POINTS,
  checkRange,
  clamp,
  designGain,
  guideUDb,
  lowestLevel,
  uncertaintyLossDb,
  type GuideOptions,
  type TrialMode,
} from './guide';
import { symEigen, type Mat } from './linalg';
import { checkNumber, dbmToMw } from './readings';
import { BRACKET_STEP_DB, nextTrial1D } from './guide1d';
import { lowest, highest } from './stats';

export interface Bounds2D {
  /** Travel of trimmer A, [min, max] in its unit. */
  a: [number, number];
  b: [number, number];
}

export interface Guide2DOptions extends GuideOptions {
  /** Smallest settable step per trimmer, in its unit; default 1/1000 of each range. */
  resolution?: { a: number; b: number };
  /** What the reason text calls the two trimmers; default "A" and "B". */
  names?: { a: string; b: string };
  /**
   * The step the meter's reading moves in near the null, dB. From 3 dB up (S-units) the two trimmers are
   * bracketed in turn, each along a line with the other held (nextTrial1D's bracket), until neither moves.
   */
  meterStepDb?: number;
}

export interface Trial2D {
  a: number;
  b: number;
  predictedDbm: number | null;
  band: [number, number] | null;
  expectedGainDb: number | null;
  stop: boolean;
  mode: TrialMode;
  reason: string;
  fit: NullFit2D | null;
}

/** Survey pattern as fractions of each range: centre, the four mid-sides, then corners. */
const SURVEY_2D: readonly [number, number][] = [
  [1 / 2, 1 / 2],
  [1 / 6, 1 / 2],
  [5 / 6, 1 / 2],
  [1 / 2, 1 / 6],
  [1 / 2, 5 / 6],
  [5 / 6, 5 / 6],
  [1 / 6, 1 / 6],
  [1 / 6, 5 / 6],
  [5 / 6, 1 / 6],
];

/**
 * The next trial setting for two trimmers.
 * @param readings all readings so far
 * @param bounds each trimmer's travel
 */
export function nextTrial2D(
  readings: readonly Reading2D[],
  bounds: Bounds2D,
  opts: Guide2DOptions = {},
): Trial2D {
  check(typeof bounds === 'object' && bounds !== null, 'bounds', 'must be { a: [min, max], b: [min, max] }');
  const [aLo, aHi] = checkRange(bounds.a, 'bounds.a');
  const [bLo, bHi] = checkRange(bounds.b, 'bounds.b');
  const res = {
    a: opts.resolution?.a ?? (aHi - aLo) / 1000,
    b: opts.resolution?.b ?? (bHi - bLo) / 1000,
  };
  for (const k of ['a', 'b'] as const) {
    const span = k === 'a' ? aHi - aLo : bHi - bLo;
    check(
      typeof res[k] === 'number' && res[k] > 0 && res[k] <= span,
      `opts.resolution.${k}`,
      `must be a step above 0 and at most the travel (${span}), got ${String(res[k])}`,
    );
  }
  const uDb = guideUDb(opts);
  const pts = readings.map((r, i) => ({
    a: checkNumber(r?.a, `readings[${i}].a`),
    b: checkNumber(r?.b, `readings[${i}].b`),
  }));
  const round = (a: number, b: number): { a: number; b: number } => ({
    a: roundTo(clamp(a, aLo, aHi), res.a),
    b: roundTo(clamp(b, bLo, bHi), res.b),
  });
  const names = { a: opts.names?.a ?? 'A', b: opts.names?.b ?? 'B' };
  if ((opts.meterStepDb ?? 0) >= BRACKET_STEP_DB)
    return inTurn(readings, { a: [aLo, aHi], b: [bLo, bHi] }, res, uDb, opts.meterStepDb!, names);
  const say = (p: { a: number; b: number }): string =>
    `${names.a} ${fixed(p.a, res.a)}, ${names.b} ${fixed(p.b, res.b)}`;

  // Readings over both travels that all agree: neither trimmer is acting on the carrier.
  const levels = readings.map((r) => r.dbm);
  const spreadDb = highest(levels) - lowest(levels);
  const covers = (xs: number[], lo: number, hi: number): boolean =>
    highest(xs) - lowest(xs) >= 0.6 * (hi - lo);
  if (
    readings.length >= 6 &&
    spreadDb < 2 * uDb &&
    covers(
      pts.map((p) => p.a),
      aLo,
      aHi,
    ) &&
    covers(
      pts.map((p) => p.b),
      bLo,
      bHi,
    )
  ) {
    const low = pts[levels.indexOf(lowest(levels))];
    return {
      ...round(low.a, low.b),
      predictedDbm: null,
      band: null,
      expectedGainDb: 0,
      stop: true,
      mode: 'done',
      reason: `stop: over both travels the level stays within ${db(spreadDb)}: the trimmers do not move the carrier (or it is below the receiver's floor)`,
      fit: null,
    };
  }

  let fit: NullFit2D | null = null;
  try {
    fit = fitNull2D(readings, { ...opts, uDb });
  } catch (e) {
    if (!isBenchError(e) || e.field !== 'readings') throw e;
  }
  if (!fit) {
    // Unit-free distance: each axis in fractions of its range.
    const far = (a: number, b: number): number =>
      Math.min(Infinity, ...pts.map((p) => Math.hypot((p.a - a) / (aHi - aLo), (p.b - b) / (bHi - bLo))));
    let pick: { a: number; b: number } | null = null;
    for (const [fa, fb] of SURVEY_2D) {
      const a = aLo + fa * (aHi - aLo);
      const b = bLo + fb * (bHi - bLo);
      if (far(a, b) >= 1 / 8) {
        pick = { a, b };
        break;
      }
    }
    if (!pick) {
      let best = -1;
      for (let i = 0; i <= 40; i++)
        for (let j = 0; j <= 40; j++) {
          const a = aLo + ((aHi - aLo) * i) / 40;
          const b = bLo + ((bHi - bLo) * j) / 40;
          if (far(a, b) > best) {
            best = far(a, b);
            pick = { a, b };
          }
        }
    }
    const p = round(pick!.a, pick!.b);
    return {
      ...p,
      predictedDbm: null,
      band: null,
      expectedGainDb: null,
      stop: false,
      mode: 'survey',
      reason: `survey ${say(p)}: ${readings.length} usable reading(s) so far; the fit needs at least 6 spread over both trimmers`,
      fit: null,
    };
  }

  const f = fit;
  const cov = f.design.covariance;
  const s2 = f.sigmaDb ** 2;
  const floorMw = dbmToMw(f.cDbm) + (f.floorDbm === null ? 0 : dbmToMw(f.floorDbm));
  // For a collinear pair only the depth across the valley is at stake; along it nothing changes.
  const eq = symEigen(f.q);
  const across = eq.vectors[1];
  const q: Mat = f.collinear
    ? [
        [eq.values[1] * across[0] * across[0], eq.values[1] * across[0] * across[1]],
        [eq.values[1] * across[0] * across[1], eq.values[1] * across[1] * across[1]],
      ]
    : f.q;
  const sigmaNull: Mat = [
    [cov[0][0], cov[0][1]],
    [cov[1][0], cov[1][1]],
  ];
  const lossDb = uncertaintyLossDb(q, sigmaNull, floorMw);
  const bestSeen = lowestLevel(readings);
  const iLow = readings.findIndex((r) => r.dbm === bestSeen);
  const nb = f.nearestBest(pts[iLow].a, pts[iLow].b);
  const target = round(nb.a, nb.b);
  const gainAtTarget = bestSeen - f.predict(target.a, target.b);
  const at = (p: { a: number; b: number }, mode: TrialMode, stop: boolean, reason: string): Trial2D => {
    const predictedDbm = f.predict(p.a, p.b);
    return {
      ...p,
      predictedDbm,
      band: f.band(p.a, p.b),
      expectedGainDb: bestSeen - predictedDbm,
      stop,
      mode,
      reason,
      fit: f,
    };
  };
  // Probe candidates: a grid over the travel, plus points along the bowl's and the uncertainty's axes.
  const candidates = new Map<string, { a: number; b: number }>();
  const add = (a: number, b: number): void => {
    const p = round(a, b);
    candidates.set(`${p.a},${p.b}`, p);
  };
  for (let i = 0; i <= 24; i++)
    for (let j = 0; j <= 24; j++) add(aLo + ((aHi - aLo) * i) / 24, bLo + ((bHi - bLo) * j) / 24);

  const rival = f.design.rival;
  if (f.collinear && rival) {
    // A valley fits, but so may a point null somewhere along it: measure where the two disagree most
    // (T-optimal discrimination, Atkinson & Fedorov, Biometrika 62(1), 1975), unless nowhere within
    // the travel they disagree by more than a reading's uncertainty.
    add(rival[0], rival[1]);
    for (let i = -12; i <= 12; i++) {
      const t = (i / 12) * Math.hypot(aHi - aLo, bHi - bLo);
      const span = Math.hypot(eq.vectors[0][0] * (aHi - aLo), eq.vectors[0][1] * (bHi - bLo)) || 1;
      add(
        nb.a + (t / span) * eq.vectors[0][0] * (aHi - aLo),
        nb.b + (t / span) * eq.vectors[0][1] * (bHi - bLo),
      );
    }
    let pick = target;
    let most = 0;
    for (const p of candidates.values()) {
      const d = Math.abs(f.predict(p.a, p.b) - f.design.predictWith(rival, p.a, p.b));
      if (d > most) {
        most = d;
        pick = p;
      }
    }
    if (most >= uDb) {
      return at(
        pick,
        'probe',
        false,
        `probe ${say(pick)}: the readings fit a valley (the trimmers acting along one line), but up to ${fixed(f.separationMaxDeg, 1)}° apart they cannot yet rule out a single null; a reading here tells the two apart`,
      );
    }
  }

  const clipped = target.a !== roundTo(nb.a, res.a) || target.b !== roundTo(nb.b, res.b);
  const edge = clipped ? ' (the fitted null lies beyond the end of travel; this is the nearest setting)' : '';

  if (lossDb < uDb || (clipped && pts.some((p) => p.a === target.a && p.b === target.b))) {
    if (gainAtTarget < uDb) {
      return at(
        target,
        'done',
        true,
        `stop: the best reading (${dbm(bestSeen)}) is within ${db(uDb)} of the predicted null (${dbm(f.predict(target.a, target.b))}); leave the trimmers at ${say(target)}${edge}`,
      );
    }
    return at(
      target,
      'confirm',
      false,
      `set ${say(target)}: the fitted null, predicted ${db(gainAtTarget)} deeper than the best reading so far${edge}`,
    );
  }

  const es = symEigen(sigmaNull);
  const dirs: { dir: number[]; len: number[] }[] = [
    // Along the bowl's axes, at multiples of the distance where the carrier rises to the floor.
    ...eq.vectors.map((v, k) => ({
      dir: v,
      len: [0.25, 0.5, 1, 2, 4].map((m) => m * Math.sqrt(floorMw / Math.max(eq.values[k], 1e-300))),
    })),
    // Along the uncertainty's axes, at multiples of its spread.
    ...es.vectors.map((v, k) => ({
      dir: v,
      len: [0.25, 0.5, 1, 2, 3].map((m) => m * Math.sqrt(Math.max(es.values[k], 0))),
    })),
  ];
  for (const { dir, len } of dirs)
    for (const l of len) {
      if (!Number.isFinite(l)) continue;
      add(nb.a + l * dir[0], nb.b + l * dir[1]);
      add(nb.a - l * dir[0], nb.b - l * dir[1]);
    }
  add(nb.a, nb.b);
  // Where the null may really be: sigma points along both axes of its uncertainty.
  const shifts: { da: number; db: number; w: number }[] = [];
  for (const { z, w } of SIGMA_POINTS) {
    for (let k = 0; k < 2; k++) {
      const sd = Math.sqrt(Math.max(es.values[k], 0));
      let da = Number.isFinite(sd) ? z * sd * es.vectors[k][0] : 0;
      let dbb = Number.isFinite(sd) ? z * sd * es.vectors[k][1] : 0;
      // Along an open valley the spread is unbounded; half the travel is as far as it matters.
      const over = Math.max(1, Math.abs(da) / (0.5 * (aHi - aLo)), Math.abs(dbb) / (0.5 * (bHi - bLo)));
      da /= over;
      dbb /= over;
      shifts.push({ da, db: dbb, w: w / 2 });
    }
  }
  let pick = target;
  let bestScore = -Infinity;
  for (const p of candidates.values()) {
    let score = 0;
    for (const s of shifts) score += s.w * designGain(cov, f.gradient(p.a - s.da, p.b - s.db), s2, q);
    if (score > bestScore) {
      bestScore = score;
      pick = p;
    }
  }
  return at(
    pick,
    'probe',
    false,
    `probe ${say(pick)}: the null is not yet known well enough (it would cost ${db(lossDb)} of depth); a reading here narrows it most`,
  );
}

/**
 * Two trimmers on a coarse meter: one trimmer bracketed along a line with the other held, then the other
 * through the middle found, and so on, until a pass ends where that trimmer already stood (to 1.5 steps).
 * Each pass is nextTrial1D's bracket on the readings of its line; the passes are replayed from the readings
 * alone, so the guide keeps no state between calls. The first line holds B at the middle of its travel.
 */
function inTurn(
  readings: readonly Reading2D[],
  bounds: Bounds2D,
  res: { a: number; b: number },
  uDb: number,
  stepDb: number,
  names: { a: string; b: string },
): Trial2D {
  let axis: 'a' | 'b' = 'a';
  const other = (k: 'a' | 'b'): 'a' | 'b' => (k === 'a' ? 'b' : 'a');
  const held: { a: number; b: number } = {
    a: roundTo((bounds.a[0] + bounds.a[1]) / 2, res.a),
    b: roundTo((bounds.b[0] + bounds.b[1]) / 2, res.b),
  };
  const found: { a: number | null; b: number | null } = { a: null, b: null };
  const trial = (p: { a: number; b: number }, mode: TrialMode, stop: boolean, reason: string): Trial2D => ({
    ...p,
    predictedDbm: null,
    band: null,
    expectedGainDb: null,
    stop,
    mode,
    reason,
    fit: null,
  });
  for (let pass = 0; pass < 40; pass++) {
    const o = other(axis);
    const line = readings.filter((r) => Math.abs(r[o] - held[o]) <= res[o] / 2);
    const t = nextTrial1D(
      line.map((r) => ({ position: r[axis], dbm: r.dbm, censored: r.censored })),
      bounds[axis],
      { uDb, resolution: res[axis], meterStepDb: stepDb },
    );
    const at = { ...held, [axis]: t.position } as { a: number; b: number };
    if (!t.stop)
      return trial(
        at,
        t.mode,
        false,
        `${names[axis]} with ${names[o]} held at ${fixed(held[o], res[o])}: ${t.reason}`,
      );
    const last = found[axis];
    found[axis] = t.position;
    held[axis] = t.position;
    if (last !== null && Math.abs(t.position - last) <= 1.5 * res[axis])
      return trial(
        held,
        'done',
        true,
        `stop: bracketing ${names[axis]} again ends where it stood (${fixed(t.position, res[axis])}); leave ${names.a} at ${fixed(held.a, res.a)} and ${names.b} at ${fixed(held.b, res.b)}`,
      );
    axis = o;
  }
  return trial(held, 'done', true, `stop: forty passes in turn; leave the trimmers at the middle found last`);
}
