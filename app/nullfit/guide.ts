// Runs anywhere (app/ is runtime-free). What the one- and two-trimmer guides share.
//
// The guide asks one question of a fit: how much depth would we lose by setting the trimmers to the
// fitted null, given how uncertain that null still is? For P = c² + dᵀQd with d the error of the
// setting, that expected excess is E = tr(Q·Σ) (Σ the covariance of the fitted null), i.e.
//   loss = 10·log10(1 + E / (c² + F))  dB   (a reading at the null is c² + F).
// While loss exceeds the reading uncertainty, the next reading goes where it shrinks E the most: one new
// reading with sensitivity g (dB per parameter) and variance s² changes the parameter covariance to
// Σ − Σg·gᵀΣ / (s² + gᵀΣg) (Sherman–Morrison), so E drops by hᵀQh / (s² + gᵀΣg), h the null-position
// part of Σg (an L-optimal design, weighted by the depth each direction costs). That linear picture is
// only as good as the fitted null: far from a sharp null it thinks any reading on the flank will do. So the
// gain is averaged over where the null may really be (sigma points of its current uncertainty), the usual
// remedy for designs on nonlinear models (Chaloner & Verdinelli, "Bayesian experimental design: a review",
// Statistical Science 10(3), 1995). Once loss is small the guide sets the fitted null, and stops when the
// best reading is within the uncertainty of it.

import { check } from '../errors';
import { dot, matVec, type Mat } from './linalg';
import type { FitOptions } from './readings';
import { lowest } from './stats';

export interface GuideOptions extends FitOptions {
  /**
   * Standard uncertainty of one reading, dB > 0; default 0.3. It is also the stop threshold: the guide
   * stops when the predicted gain over the best reading is smaller than this.
   */
  uDb?: number;
}

/** Where a trial comes from: still surveying the range, probing to pin the null, confirming it, or done. */
export type TrialMode = 'survey' | 'probe' | 'confirm' | 'done';

export const DEFAULT_GUIDE_UDB = 0.3;

/** The guide's reading uncertainty: opts.uDb or the default, and never zero (it is the stop threshold). */
export function guideUDb(opts: GuideOptions): number {
  const u = opts.uDb ?? DEFAULT_GUIDE_UDB;
  check(
    typeof u === 'number' && u > 0 && u <= 20,
    'opts.uDb',
    `must be a reading uncertainty above 0 and at most 20 dB, got ${String(u)}`,
  );
  return u;
}

/**
 * The guide's reading uncertainty for a meter whose reading moves in steps of stepDb: the step read as a
 * uniform distribution, step/√12 (GUM 4.3.7), never below the default (noise and settling). A meter read in
 * S-units (6 dB) gives 1.73 dB; a 1 dB or finer readout keeps the default.
 */
export function meterUDb(stepDb?: number): number {
  if (stepDb === undefined || !Number.isFinite(stepDb) || stepDb <= 0) return DEFAULT_GUIDE_UDB;
  return Math.max(DEFAULT_GUIDE_UDB, stepDb / Math.sqrt(12));
}

export function checkRange(r: unknown, field: string): [number, number] {
  check(
    Array.isArray(r) &&
      r.length === 2 &&
      typeof r[0] === 'number' &&
      typeof r[1] === 'number' &&
      Number.isFinite(r[0]) &&
      Number.isFinite(r[1]) &&
      r[0] < r[1],
    field,
    `must be [min, max] with finite min < max, got ${JSON.stringify(r)}`,
  );
  return [r[0], r[1]];
}

export function clamp(x: number, lo: number, hi: number): number {
  return Math.min(hi, Math.max(lo, x));
}

/** Depth lost to the uncertainty of the null, dB: 10·log10(1 + tr(Q·Σ)/floor), floor = c² + F in mW. */
export function uncertaintyLossDb(q: Mat, sigmaNull: Mat, floorMw: number): number {
  let e = 0;
  for (let i = 0; i < q.length; i++) for (let j = 0; j < q.length; j++) e += q[i][j] * sigmaNull[j][i];
  return 10 * Math.log10(1 + Math.max(e, 0) / floorMw);
}

/**
 * Reduction of tr(Q·Σ_null) brought by one reading with sensitivity g: hᵀQh / (s² + gᵀΣg),
 * h = (Σg) restricted to the first q.length parameters (the null position).
 */
export function designGain(cov: Mat, g: readonly number[], s2: number, q: Mat): number {
  const sg = matVec(cov, g);
  const h = sg.slice(0, q.length);
  return dot(h, matVec(q, h)) / (s2 + dot(g, sg));
}

/** The lowest reading so far, dBm, as the receiver showed it (censored ones included: they are what the user saw). */
export function lowestLevel(readings: readonly { dbm: number }[]): number {
  return lowest(readings.map((r) => r.dbm));
}

/**
 * Where the null may be, in standard deviations of its fitted position, with weights: 5-point
 * Gauss–Hermite quadrature for the expectation over a normal spread. The nodes are the roots of the
 * probabilists' Hermite polynomial He5(x) = x⁵ − 10x³ + 15x (x² = 5 ± √10), the weights
 * 5!/(5²·He4(x)²) with He4(x) = x⁴ − 6x² + 3 (Abramowitz & Stegun 22.2.15 and 25.4.46, rescaled).
 */
export const SIGMA_POINTS: readonly { z: number; w: number }[] = [
  -Math.sqrt(5 + Math.sqrt(10)),
  -Math.sqrt(5 - Math.sqrt(10)),
  0,
  Math.sqrt(5 - Math.sqrt(10)),
  Math.sqrt(5 + Math.sqrt(10)),
].map((z) => ({ z, w: 120 / (25 * (z ** 4 - 6 * z ** 2 + 3) ** 2) }));

/** Survey order across one axis, as fractions of the range: middle, then thirds, then ends. */
export const SURVEY_FRACTIONS = [1 / 2, 1 / 6, 5 / 6, 1 / 3, 2 / 3, 0, 1, 1 / 12, 11 / 12, 5 / 12, 7 / 12];
