// Runs anywhere (app/ is runtime-free). Robust nonlinear least squares by Levenberg–Marquardt.
//
// The robust loss follows the convention of scipy.optimize.least_squares, so the two can be compared on
// the same data: cost = ½·Σ f²·ρ((rᵢ/f)²) with f the loss scale (in the residual's unit, dB here) and
//   linear   ρ(z) = z
//   soft_l1  ρ(z) = 2·(√(1+z) − 1)
//   huber    ρ(z) = z for z ≤ 1, 2·√z − 1 otherwise.
// Each step is a damped Gauss–Newton step on the reweighted problem (weights ρ'(zᵢ)); its gradient is
// the exact gradient of the robust cost, so the fit stops where that gradient vanishes, which is the
// point scipy reaches too. Steps are accepted only if they lower the robust cost.

import { cholesky, choleskySolve, zeros, type Mat } from './linalg';

export type Loss = 'linear' | 'soft_l1' | 'huber';

/** Residuals and their Jacobian at one parameter vector: J[i][j] = ∂rᵢ/∂pⱼ. */
export interface Residuals {
  r: number[];
  J: number[][];
}

export interface LmOptions {
  loss: Loss;
  /** Loss scale f in the residual's unit (residuals beyond f count less than quadratically), f > 0. */
  fScale: number;
  /** Box bounds per parameter; a step leaving the box is clipped to it. */
  lower?: readonly number[];
  upper?: readonly number[];
  maxIterations?: number;
}

export interface LmResult {
  params: number[];
  /** Robust cost ½·Σ f²·ρ((rᵢ/f)²) at the solution. */
  cost: number;
  r: number[];
  J: number[][];
  /** Robust weights ρ'(zᵢ) at the solution (1 for the linear loss). */
  weights: number[];
  iterations: number;
  converged: boolean;
}

function rho(z: number, loss: Loss): number {
  if (loss === 'soft_l1') return 2 * (Math.sqrt(1 + z) - 1);
  if (loss === 'huber') return z <= 1 ? z : 2 * Math.sqrt(z) - 1;
  return z;
}

function rhoPrime(z: number, loss: Loss): number {
  if (loss === 'soft_l1') return 1 / Math.sqrt(1 + z);
  if (loss === 'huber') return z <= 1 ? 1 : 1 / Math.sqrt(z);
  return 1;
}

/** ½·Σ f²·ρ((rᵢ/f)²) */
export function robustCost(r: readonly number[], loss: Loss, f: number): number {
  let s = 0;
  for (const ri of r) s += f * f * rho((ri / f) ** 2, loss);
  return 0.5 * s;
}

export function robustWeights(r: readonly number[], loss: Loss, f: number): number[] {
  return r.map((ri) => rhoPrime((ri / f) ** 2, loss));
}

/** Weighted information matrix JᵀWJ and gradient JᵀWr. */
export function normalEquations(res: Residuals, w: readonly number[]): { h: Mat; g: number[] } {
  const p = res.J[0]?.length ?? 0;
  const h = zeros(p, p);
  const g = new Array<number>(p).fill(0);
  for (let i = 0; i < res.r.length; i++) {
    const row = res.J[i];
    const wi = w[i];
    if (wi === 0) continue;
    for (let a = 0; a < p; a++) {
      if (row[a] === 0) continue;
      g[a] += wi * row[a] * res.r[i];
      for (let b = 0; b <= a; b++) h[a][b] += wi * row[a] * row[b];
    }
  }
  for (let a = 0; a < p; a++) for (let b = a + 1; b < p; b++) h[a][b] = h[b][a];
  return { h, g };
}

function clip(p: number[], lower?: readonly number[], upper?: readonly number[]): number[] {
  return p.map((v, i) => Math.min(upper?.[i] ?? Infinity, Math.max(lower?.[i] ?? -Infinity, v)));
}

/**
 * Minimise the robust cost of `fn` from `p0`.
 * @param fn residuals (finite numbers) and Jacobian at a parameter vector
 */
export function levenbergMarquardt(
  fn: (p: readonly number[]) => Residuals,
  p0: readonly number[],
  opts: LmOptions,
): LmResult {
  const { loss, fScale: f } = opts;
  const maxIterations = opts.maxIterations ?? 200;
  let p = clip(p0.slice(), opts.lower, opts.upper);
  let res = fn(p);
  let cost = robustCost(res.r, loss, f);
  let lambda = 1e-3;
  let iterations = 0;
  let converged = false;
  const n = p.length;

  while (iterations < maxIterations && !converged) {
    iterations++;
    const w = robustWeights(res.r, loss, f);
    const { h, g } = normalEquations(res, w);
    // A parameter resting on a bound that the gradient pushes further out is held there (active set):
    // clipping its step instead would bend the step of every other parameter too.
    for (let j = 0; j < n; j++) {
      const atLower = opts.lower !== undefined && p[j] <= opts.lower[j] && g[j] > 0;
      const atUpper = opts.upper !== undefined && p[j] >= opts.upper[j] && g[j] < 0;
      if (!atLower && !atUpper) continue;
      for (let k = 0; k < n; k++) h[j][k] = h[k][j] = 0;
      h[j][j] = 1;
      g[j] = 0;
    }
    // Gradient small against the curvature of each parameter: nothing left to gain.
    let gScaled = 0;
    for (let j = 0; j < n; j++)
      if (h[j][j] > 0) gScaled = Math.max(gScaled, Math.abs(g[j]) / Math.sqrt(h[j][j]));
    if (gScaled <= 1e-12 * Math.sqrt(2 * cost + 1e-300) || gScaled === 0) {
      converged = true;
      break;
    }
    let accepted = false;
    while (!accepted) {
      const a = h.map((row, i) => row.map((v, j) => (i === j ? v + lambda * Math.max(v, 1e-300) : v)));
      const l = cholesky(a);
      if (!l) {
        lambda *= 10;
        if (lambda > 1e16) break;
        continue;
      }
      const step = choleskySolve(
        l,
        g.map((v) => -v),
      );
      const pNew = clip(
        p.map((v, j) => v + step[j]),
        opts.lower,
        opts.upper,
      );
      const resNew = fn(pNew);
      const costNew = resNew.r.every(Number.isFinite) ? robustCost(resNew.r, loss, f) : Infinity;
      if (costNew <= cost) {
        // Relative change of cost and step (in units of each parameter's curvature) decide the end.
        let stepScaled = 0;
        for (let j = 0; j < n; j++) stepScaled += (pNew[j] - p[j]) ** 2 * Math.max(h[j][j], 0);
        const small = cost - costNew <= 1e-15 * cost || stepScaled <= 1e-24 * (2 * cost + 1e-300);
        p = pNew;
        res = resNew;
        cost = costNew;
        lambda = Math.max(lambda / 3, 1e-12);
        accepted = true;
        if (small) converged = true;
      } else {
        lambda *= 4;
        if (lambda > 1e16) break;
      }
    }
    if (!accepted) {
      // No downhill step even with heavy damping: we sit at the minimum within rounding.
      converged = true;
      break;
    }
  }
  return {
    params: p,
    cost,
    r: res.r,
    J: res.J,
    weights: robustWeights(res.r, loss, f),
    iterations,
    converged,
  };
}
