// Runs anywhere (app/ is runtime-free). Guided alignment of one trimmer: the next position to try.

import { check, isBenchError } from '../errors';
import { fitNull1D, type NullFit1D, type Reading1D } from './fit1d';
import { db, dbm, fixed, roundTo } from './format';
import {
  SIGMA_POINTS,
  SURVEY_FRACTIONS,
  checkRange,
  clamp,
  designGain,
  guideUDb,
  lowestLevel,
  uncertaintyLossDb,
  type GuideOptions,
  type TrialMode,
} from './guide';
import { checkNumber, dbmToMw } from './readings';
import { lowest, highest } from './stats';

export interface Guide1DOptions extends GuideOptions {
  /** Smallest settable step of the trimmer, position units > 0; default 1/1000 of the range. */
  resolution?: number;
  /**
   * The step the meter's reading moves in near the null, dB. From 3 dB up (a meter read in S-units) the
   * guide brackets the null instead of fitting its depth: it finds where the reading leaves the lowest step
   * on each side and sets the middle (the null is symmetric in the trimmer's travel, see fit1d).
   */
  meterStepDb?: number;
}

/** From this meter step up, dB, the guide brackets (a fit of levels read in such steps cannot place the null). */
export const BRACKET_STEP_DB = 3;

export interface Trial1D {
  /** Next position to set, in the position unit (rounded to the resolution). */
  position: number;
  /** Predicted reading there, dBm; null while surveying. */
  predictedDbm: number | null;
  /** Prediction band there, [low, high] dBm; null while surveying. */
  band: [number, number] | null;
  /** Predicted improvement over the best reading so far, dB (negative for a probe on the flank); null while surveying. */
  expectedGainDb: number | null;
  /** True when the predicted gain is below the reading uncertainty: set `position` and keep it. */
  stop: boolean;
  mode: TrialMode;
  /** One sentence for the bench: what to do and why. */
  reason: string;
  /** The fit the suggestion rests on; null while surveying. */
  fit: NullFit1D | null;
}

/**
 * The next trial position for one trimmer.
 * @param readings all readings so far (any order)
 * @param bounds the trimmer's travel, [min, max] in its unit
 */
export function nextTrial1D(
  readings: readonly Reading1D[],
  bounds: [number, number],
  opts: Guide1DOptions = {},
): Trial1D {
  const [lo, hi] = checkRange(bounds, 'bounds');
  const span = hi - lo;
  const resolution = opts.resolution ?? span / 1000;
  check(
    typeof resolution === 'number' && resolution > 0 && resolution <= span,
    'opts.resolution',
    `must be a step above 0 and at most the travel (${span}), got ${String(resolution)}`,
  );
  const uDb = guideUDb(opts);
  const positions = readings.map((r, i) => checkNumber(r?.position, `readings[${i}].position`));

  // Readings over the whole travel that all agree: the trimmer is not acting on the carrier at all.
  const levels = readings.map((r) => r.dbm);
  const covered = highest(positions) - lowest(positions) >= 0.6 * span;
  if (readings.length >= 4 && covered && highest(levels) - lowest(levels) < 2 * uDb) {
    return {
      position: roundTo(positions[levels.indexOf(lowest(levels))], resolution),
      predictedDbm: null,
      band: null,
      expectedGainDb: 0,
      stop: true,
      mode: 'done',
      reason: `stop: over the whole travel the level stays within ${db(highest(levels) - lowest(levels))}: this trimmer does not move the carrier (or the carrier is below the receiver's floor)`,
      fit: null,
    };
  }

  let fit: NullFit1D | null = null;
  try {
    fit = fitNull1D(readings, { ...opts, uDb });
  } catch (e) {
    if (!isBenchError(e) || e.field !== 'readings') throw e;
  }
  if (!fit) return survey(positions, lo, span, resolution, readings.length);

  const round = (x: number): number => roundTo(clamp(x, lo, hi), resolution);
  const x0 = fit.x0;
  const cov = fit.design.covariance;
  const s2 = fit.sigmaDb ** 2;
  // An unresolved c² counts at its upper bound: a reading at the null is then what resolves it.
  const floorMw = dbmToMw(fit.cDbm) + (fit.floorDbm === null ? 0 : dbmToMw(fit.floorDbm));
  const q = [[fit.a * fit.a]];
  const lossDb = uncertaintyLossDb(q, [[cov[0][0]]], floorMw);
  const bestSeen = lowestLevel(readings);
  const target = round(x0);
  const outside = x0 < lo || x0 > hi;
  const gainAtTarget = bestSeen - fit.predict(target);
  const at = (position: number, mode: TrialMode, stop: boolean, reason: string): Trial1D => {
    const predictedDbm = fit.predict(position);
    return {
      position,
      predictedDbm,
      band: fit.band(position),
      expectedGainDb: bestSeen - predictedDbm,
      stop,
      mode,
      reason,
      fit,
    };
  };
  const where = fixed(target, resolution);

  if (outside && (fit.ci[0] > hi || fit.ci[1] < lo)) {
    // The null lies beyond the end stop: the end is the best there is.
    const tried = positions.some((x) => Math.abs(x - target) <= resolution / 2);
    const beyond = `the fitted null (${fixed(x0, resolution)}) lies beyond the end of travel`;
    return tried
      ? at(target, 'done', true, `stop: ${beyond}; leave the trimmer at the end stop ${where}`)
      : at(target, 'confirm', false, `set ${where}: ${beyond}, so the end stop is as deep as it goes`);
  }
  if ((opts.meterStepDb ?? 0) >= BRACKET_STEP_DB) {
    const t = bracket(readings, positions, fit, round, resolution, lo, hi, opts.meterStepDb!);
    return at(t.position, t.mode, t.mode === 'done', t.reason);
  }
  if (lossDb < uDb) {
    if (gainAtTarget < uDb) {
      return at(
        target,
        'done',
        true,
        `stop: the best reading (${dbm(bestSeen)}) is within ${db(uDb)} of the predicted null (${dbm(fit.predict(target))}); leave the trimmer at ${where}`,
      );
    }
    return at(
      target,
      'confirm',
      false,
      `set ${where}: the fitted null, predicted ${db(gainAtTarget)} deeper than the best reading so far`,
    );
  }

  // Probe where one more reading pins the null down best: near the null, where the V turns into the floor.
  const knee = Math.sqrt(floorMw) / Math.max(fit.a, 1e-300);
  const sd = Math.sqrt(cov[0][0]);
  const candidates = new Set<number>();
  for (let i = 0; i <= 200; i++) candidates.add(round(lo + (span * i) / 200));
  for (const m of [0, 0.25, 0.5, 1, 2, 4]) {
    candidates.add(round(x0 + m * knee));
    candidates.add(round(x0 - m * knee));
  }
  for (const m of [0.25, 0.5, 1, 1.5, 2, 3]) {
    candidates.add(round(x0 + m * sd));
    candidates.add(round(x0 - m * sd));
  }
  let bestX = target;
  let bestScore = -Infinity;
  for (const x of candidates) {
    // The model depends on x − x0 only, so a null shifted by δ is the fitted one seen from x − δ.
    let score = 0;
    for (const { z, w } of SIGMA_POINTS) score += w * designGain(cov, fit.gradient(x - z * sd), s2, q);
    if (score > bestScore) {
      bestScore = score;
      bestX = x;
    }
  }
  return at(
    bestX,
    'probe',
    false,
    `probe ${fixed(bestX, resolution)}: the null (${where} ± ${fixed(sd, resolution)}) is not yet known well enough (it would cost ${db(lossDb)} of depth); a reading here narrows it most`,
  );
}

/**
 * The null on a coarse meter: the readings at the lowest step seen span [xl, xr]; the nearest readings above it
 * on either side bound where the meter steps up. Each side's edge is pinned down to the trimmer's resolution,
 * probing first where the fit expects the step (regula falsi), else halfway; then the middle of the two edges
 * is the null, by the symmetry of |residual|² in the trimmer's position. A lower step found on the way starts
 * it again from there.
 */
function bracket(
  readings: readonly Reading1D[],
  positions: number[],
  fit: NullFit1D,
  round: (x: number) => number,
  resolution: number,
  lo: number,
  hi: number,
  stepDb: number,
): { position: number; mode: TrialMode; reason: string } {
  const levels = readings.map((r) => r.dbm);
  const low = lowest(levels);
  const atLow = positions.filter((_, i) => levels[i] <= low + 1e-9);
  const xl = lowest(atLow);
  const xr = highest(atLow);
  const above = positions.filter((_, i) => levels[i] > low + 1e-9);
  const outerL = Math.max(-Infinity, ...above.filter((x) => x < xl));
  const outerR = Math.min(Infinity, ...above.filter((x) => x > xr));
  const tried = (x: number) => positions.some((p) => Math.abs(p - x) <= resolution / 2);
  // Where the fit puts the step up on each side: the level one step above the lowest.
  const width = Math.sqrt(Math.max(0, dbmToMw(low + stepDb) - dbmToMw(fit.cDbm))) / Math.max(fit.a, 1e-300);
  const sides = [
    { name: 'below', inner: xl, outer: outerL, guess: fit.x0 - width, end: lo },
    { name: 'above', inner: xr, outer: outerR, guess: fit.x0 + width, end: hi },
  ];
  // The wider open side first.
  sides.sort(
    (a, b) =>
      Math.abs(b.inner - (Number.isFinite(b.outer) ? b.outer : b.end)) -
      Math.abs(a.inner - (Number.isFinite(a.outer) ? a.outer : a.end)),
  );
  for (const sd of sides) {
    const outer = Number.isFinite(sd.outer) ? sd.outer : sd.end;
    if (Math.abs(outer - sd.inner) <= 1.5 * resolution) continue;
    const between = (x: number) => (x - sd.inner) * (x - outer) < 0 && !tried(x);
    let x = round(sd.guess);
    if (!between(x)) x = round((sd.inner + outer) / 2);
    if (!between(x)) continue;
    return {
      position: x,
      mode: 'probe',
      reason: `probe ${fixed(x, resolution)}: where the meter steps up from its lowest reading (${dbm(low)}) ${sd.name} the null is not yet found to the trimmer's step`,
    };
  }
  const mid = round((xl + xr) / 2);
  return tried(mid)
    ? {
        position: mid,
        mode: 'done',
        reason: `stop: ${fixed(mid, resolution)} lies halfway between where the meter steps up on either side; leave the trimmer there`,
      }
    : {
        position: mid,
        mode: 'confirm',
        reason: `set ${fixed(mid, resolution)}: halfway between where the meter steps up from its lowest reading (${dbm(low)}) on either side`,
      };
}

function survey(positions: number[], lo: number, span: number, resolution: number, n: number): Trial1D {
  const far = (x: number): number => Math.min(Infinity, ...positions.map((p) => Math.abs(p - x)));
  let position = NaN;
  for (const f of SURVEY_FRACTIONS) {
    const x = lo + f * span;
    if (far(x) >= span / 12) {
      position = x;
      break;
    }
  }
  if (Number.isNaN(position)) {
    // Every survey point is taken: go to the middle of the widest gap.
    let best = -1;
    for (let i = 0; i <= 400; i++) {
      const x = lo + (span * i) / 400;
      if (far(x) > best) {
        best = far(x);
        position = x;
      }
    }
  }
  position = roundTo(position, resolution);
  return {
    position,
    predictedDbm: null,
    band: null,
    expectedGainDb: null,
    stop: false,
    mode: 'survey',
    reason: `survey ${fixed(position, resolution)}: ${n} usable reading(s) so far; the fit needs at least 3 across the range, 2 of them above the floor`,
    fit: null,
  };
}
