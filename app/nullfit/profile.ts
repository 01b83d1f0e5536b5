// Runs anywhere (app/ is runtime-free). Profile-likelihood bounds for a fitted parameter the data only
// bound from one side: the trimmer-independent floor c² of a null that sinks below the receiver's floor,
// or how far from collinear two trimmers may still be when the fit finds them collinear.

import { levenbergMarquardt, type LmResult, type Residuals } from './lm';
import type { ResolvedFitOptions } from './readings';
import { normalQuantile } from './stats';

export interface ProfileBound {
  /** The bound, in the parameter's unit. */
  value: number;
  /** All parameters refitted with parameter j held at the bound (the "rival" the data cannot rule out). */
  params: number[];
}

/**
 * The largest (direction +1) or smallest (−1) value of parameter `j` that the data still allow at the
 * fit's confidence level: the cost, refitted over the other parameters with j held, may rise by at
 * most z²·sigma²/2 above its minimum (z the one-sided normal quantile; the likelihood-ratio bound).
 * @param step first trial step away from the fitted value, in the parameter's unit (> 0)
 * @param tol resolution of the bound, same unit
 * @param reach give up beyond fitted ± reach (the bound is then reported there: the data set none)
 */
export function profileBound(
  fn: (t: readonly number[]) => Residuals,
  lm: LmResult,
  j: number,
  o: ResolvedFitOptions,
  sigmaDb: number,
  direction: 1 | -1 = 1,
  step = 1,
  tol = 0.01,
  reach = 400,
): ProfileBound & { open: boolean } {
  const z = normalQuantile(o.level);
  const allowed = lm.cost + 0.5 * z * z * (Number.isFinite(sigmaDb) && sigmaDb > 0 ? sigmaDb ** 2 : 0.01);
  const others = lm.params.map((_, i) => i).filter((i) => i !== j);
  const full = (t: readonly number[], v: number): number[] => {
    const q = lm.params.slice();
    others.forEach((i, k) => (q[i] = t[k]));
    q[j] = v;
    return q;
  };
  let start = others.map((i) => lm.params[i]);
  let accepted = { value: lm.params[j], params: lm.params.slice() };
  // Each trial starts from the last value the data allowed, so a rejected trial cannot derail the next.
  const allows = (v: number): boolean => {
    const reduced = (t: readonly number[]): Residuals => {
      const r = fn(full(t, v));
      return { r: r.r, J: r.J.map((row) => others.map((i) => row[i])) };
    };
    const fit = levenbergMarquardt(reduced, start, {
      loss: o.loss,
      fScale: o.lossScaleDb,
      maxIterations: 100,
    });
    if (fit.cost > allowed) return false;
    start = fit.params;
    accepted = { value: v, params: full(fit.params, v) };
    return true;
  };
  // Distances from the fitted value: `inside` is allowed, `outside` is not (or not yet tried).
  const from = lm.params[j];
  const at = (d: number): number => from + direction * d;
  let inside = 0;
  let outside = step;
  // Walk out in growing steps until the data object, then bisect.
  while (outside < reach && allows(at(outside))) {
    inside = outside;
    outside *= 3;
  }
  if (outside >= reach) {
    if (allows(at(reach))) return { ...accepted, open: true };
    outside = reach;
  }
  while (outside - inside > tol) {
    const mid = 0.5 * (inside + outside);
    if (allows(at(mid))) inside = mid;
    else outside = mid;
  }
  return { ...accepted, open: false };
}

/**
 * Is the trimmer-independent floor C (dBm, parameter j) seen in the data, or only bounded from above?
 * Seen when its fitted standard uncertainty is under 1 dB, or when the data rule out a floor 60 dB
 * lower (the profile bound downwards closes). Otherwise the floor is reported as its upper bound.
 */
export function floorBound(
  fn: (t: readonly number[]) => Residuals,
  lm: LmResult,
  j: number,
  o: ResolvedFitOptions,
  sigmaDb: number,
  sdDb: number,
): { open: boolean; bound: number } {
  if (sdDb < 1) return { open: false, bound: lm.params[j] };
  if (!profileBound(fn, lm, j, o, sigmaDb, -1, 1, 0.05, 60).open) return { open: false, bound: lm.params[j] };
  return { open: true, bound: profileBound(fn, lm, j, o, sigmaDb, 1, 1, 0.01, 400).value };
}
