// Runs anywhere (app/ is runtime-free). Turning a two-trimmer fit into an instruction for the bench:
// which way to turn each trimmer and by how much, in the user's units.

import { check } from '../errors';
import type { NullFit2D } from './fit2d';
import { roundTo, roundingStep, signedAmount } from './format';

export interface TrimUnits {
  /** Unit of trimmer A's position as the user reads it ("turns", "°", "steps"). */
  a: string;
  b: string;
}

export interface Suggestion2D {
  /** Setting to go to, rounded to the digits the fit supports. */
  a: number;
  b: number;
  /** Moves from the current setting (target − current), same rounding. */
  deltaA: number;
  deltaB: number;
  /** "turn A +0.35 turns, B −12°" */
  text: string;
  /** Predicted receiver reading at the target, dBm. */
  predictedDbm: number;
  /** Predicted improvement over the current setting, dB (positive = deeper). */
  gainDb: number;
  /** Why the target is what it is, when that needs saying (a collinear pair); otherwise ''. */
  note: string;
}

/**
 * Next setting of both trimmers from a fit and where they are now.
 * @param current the trimmers' present positions, in their units
 * @param units unit names for the text; default none
 */
export function suggestNext2D(
  fit: NullFit2D,
  current: { a: number; b: number },
  units: TrimUnits = { a: '', b: '' },
): Suggestion2D {
  check(
    typeof current?.a === 'number' && Number.isFinite(current.a),
    'current.a',
    `must be a finite number, got ${String(current?.a)}`,
  );
  check(
    typeof current.b === 'number' && Number.isFinite(current.b),
    'current.b',
    `must be a finite number, got ${String(current.b)}`,
  );
  const target = fit.nearestBest(current.a, current.b);
  const stepA = roundingStep((fit.ciA[1] - fit.ciA[0]) / 2, target.a - current.a);
  const stepB = roundingStep((fit.ciB[1] - fit.ciB[0]) / 2, target.b - current.b);
  const deltaA = roundTo(target.a - current.a, stepA);
  const deltaB = roundTo(target.b - current.b, stepB);
  const a = roundTo(current.a + deltaA, stepA);
  const b = roundTo(current.b + deltaB, stepB);
  const moves: string[] = [];
  const stays: string[] = [];
  if (deltaA !== 0) moves.push(`A ${signedAmount(deltaA, stepA, units.a)}`);
  else stays.push('A');
  if (deltaB !== 0) moves.push(`B ${signedAmount(deltaB, stepB, units.b)}`);
  else stays.push('B');
  let text: string;
  if (moves.length === 0) text = 'leave A and B: they are at the fitted null';
  else text = `turn ${moves.join(', ')}${stays.length ? `; leave ${stays[0]}` : ''}`;
  const predictedDbm = fit.predict(a, b);
  return {
    a,
    b,
    deltaA,
    deltaB,
    text,
    predictedDbm,
    gainDb: fit.predict(current.a, current.b) - predictedDbm,
    note: fit.collinear
      ? 'the two trimmers move the carrier along nearly the same direction: the null is a valley, and this is its nearest point'
      : '',
  };
}
