// Test helpers for the null fits: seeded synthetic benches and the bridge to the reference library
// (scipy.optimize.least_squares and scipy.stats from Debian's python3-scipy, via /usr/bin/python3).
import { spawnSync } from 'node:child_process';
import type { Reading1D } from '../../app/nullfit/fit1d';
import type { Reading2D } from '../../app/nullfit/fit2d';

/** Debian's interpreter (has numpy and scipy); not whatever python3 is first on PATH. */
export const PYTHON = '/usr/bin/python3';

/** Run a Python script with `input` as JSON on stdin; returns its stdout parsed as JSON. */
export function runPython<T>(script: string, input: unknown): T {
  const r = spawnSync(PYTHON, ['-c', script], {
    input: JSON.stringify(input),
    encoding: 'utf8',
    timeout: 120_000,
  });
  if (r.status !== 0) throw new Error(`${PYTHON} failed (${r.status}): ${r.stderr}`);
  return JSON.parse(r.stdout) as T;
}

/** mulberry32: a small seeded generator, so every synthetic bench is the same on every run. */
export function rng(seed: number): { uniform(): number; gauss(): number } {
  let s = seed >>> 0;
  const uniform = (): number => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const gauss = (): number => Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
  return { uniform, gauss };
}

const mw = (dbm: number): number => Math.pow(10, dbm / 10);
const dbm = (p: number): number => 10 * Math.log10(p);

/** A one-trimmer bench: P = a²(x − x0)² + c², read through a receiver with floor F (power sum). */
export interface Bench1D {
  a: number;
  x0: number;
  cDbm: number;
  floorDbm: number | null;
}

export function reading1D(b: Bench1D, x: number): number {
  return dbm(b.a * b.a * (x - b.x0) ** 2 + mw(b.cDbm) + (b.floorDbm === null ? 0 : mw(b.floorDbm)));
}

/** Readings at `positions` with Gaussian noise of `noiseDb` (dB) from a seeded generator. */
export function sample1D(b: Bench1D, positions: number[], noiseDb: number, seed: number): Reading1D[] {
  const g = rng(seed);
  return positions.map((x) => ({ position: x, dbm: reading1D(b, x) + noiseDb * g.gauss() }));
}

/** A two-trimmer bench: r = gA·(a − a0) + gB·(b − b0), complex gains as [re, im] in √mW per unit. */
export interface Bench2D {
  a0: number;
  b0: number;
  gA: [number, number];
  gB: [number, number];
  cDbm: number;
  floorDbm: number | null;
}

export function reading2D(k: Bench2D, a: number, b: number): number {
  const re = k.gA[0] * (a - k.a0) + k.gB[0] * (b - k.b0);
  const im = k.gA[1] * (a - k.a0) + k.gB[1] * (b - k.b0);
  return dbm(re * re + im * im + mw(k.cDbm) + (k.floorDbm === null ? 0 : mw(k.floorDbm)));
}

export function sample2D(k: Bench2D, pts: [number, number][], noiseDb: number, seed: number): Reading2D[] {
  const g = rng(seed);
  return pts.map(([a, b]) => ({ a, b, dbm: reading2D(k, a, b) + noiseDb * g.gauss() }));
}

/** Gains from magnitudes and phases (degrees). */
export function polar(mag: number, deg: number): [number, number] {
  return [mag * Math.cos((deg * Math.PI) / 180), mag * Math.sin((deg * Math.PI) / 180)];
}

/**
 * The same models fitted by scipy.optimize.least_squares (Debian python3-scipy), same parameters,
 * same robust loss, same censoring rule, but its own starting point (a polynomial fit in linear power
 * by numpy) and its own optimiser (trust-region reflective, 3-point finite-difference Jacobian; run unscaled and with
 * variables scaled by the Jacobian's columns, keeping the lower cost).
 * Input: { cases: [{ kind: '1d'|'2d', x? | a?, b?, dbm, censored, floorDbm, loss, fScale }] }.
 * Output per case: params, cost, and for the linear loss the covariance s²(JᵀJ)⁻¹ and t quantile.
 */
export const SCIPY_FIT = String.raw`
import json, sys
import numpy as np
from scipy.optimize import least_squares
from scipy import stats

LN = 10.0 / np.log(10.0)
out = []
for d in json.load(sys.stdin)['cases']:
    y = np.array(d['dbm'], float)
    cens = np.array(d['censored'], bool)
    fl = d.get('floorDbm')
    F = 10 ** (fl / 10) if fl is not None else 0.0
    bound = np.maximum(y, fl) if fl is not None else y
    add = np.where(cens, 0.0, F)
    target = np.where(cens, bound, y)
    u = ~cens
    e = np.maximum(10 ** (y[u] / 10) - F, 1e-30)
    if d['kind'] == '1d':
        x = np.array(d['x'], float)
        def fun(t):
            x0, A, C = t
            m = 10 ** (A / 10) * (x - x0) ** 2 + 10 ** (C / 10) + add
            v = LN * np.log(m) - target
            return np.where(cens, np.maximum(v, 0.0), v)
        al, be, ga = np.polyfit(x[u], e, 2)
        x0 = -be / (2 * al)
        c2 = max(ga - be * be / (4 * al), 1e-3 * e.min())
        t0 = [x0, 10 * np.log10(al), 10 * np.log10(c2)]
    else:
        a = np.array(d['a'], float)
        b = np.array(d['b'], float)
        def fun(t):
            a0, b0, g1, gu, gv, C = t
            re = g1 * (a - a0) + gu * (b - b0)
            im = gv * (b - b0)
            m = re * re + im * im + 10 ** (C / 10) + add
            v = LN * np.log(m) - target
            return np.where(cens, np.maximum(v, 0.0), v)
        X = np.column_stack([np.ones(u.sum()), a[u], b[u], a[u] ** 2, a[u] * b[u], b[u] ** 2])
        k = np.linalg.lstsq(X, e, rcond=None)[0]
        Q = np.array([[k[3], k[4] / 2], [k[4] / 2, k[5]]])
        ctr = -0.5 * np.linalg.solve(Q, k[1:3])
        c2 = max(k[0] + 0.5 * k[1:3] @ ctr, 1e-3 * e.min())
        L = np.linalg.cholesky(Q)
        t0 = [ctr[0], ctr[1], L[0, 0], L[1, 0], L[1, 1], 10 * np.log10(c2)]
    r = None
    with np.errstate(all='ignore'):
        for xs in (1.0, 'jac'):
            t = least_squares(fun, t0, loss=d['loss'], f_scale=d['fScale'], jac='3-point', x_scale=xs,
                              xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=3000)
            if np.isfinite(t.cost) and (r is None or t.cost < r.cost):
                r = t
    res = {'params': r.x.tolist(), 'cost': float(r.cost), 'status': int(r.status)}
    if d['loss'] == 'linear':
        J = r.jac
        dof = len(y) - len(r.x)
        s2 = 2 * r.cost / dof
        res['cov'] = (s2 * np.linalg.inv(J.T @ J)).tolist()
        res['t975'] = float(stats.t.ppf(0.975, dof))
    out.append(res)
print(json.dumps(out))
`;
