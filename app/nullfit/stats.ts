// Runs anywhere (app/ is runtime-free). The few distribution quantiles the null fits need for their
// confidence intervals: Student's t (per-parameter intervals) and the 2-D ellipse scale from F(2, ν).

/** ln Γ(x) for x > 0, Lanczos approximation (g = 7, 9 terms), relative error below 1e-14. */
export function lnGamma(x: number): number {
  const c = [
    0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
    12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
  ];
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - lnGamma(1 - x);
  const z = x - 1;
  let s = c[0];
  for (let i = 1; i < 9; i++) s += c[i] / (z + i);
  const t = z + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(s);
}

/** Continued fraction for the incomplete beta function (modified Lentz). */
function betaContinuedFraction(a: number, b: number, x: number): number {
  const tiny = 1e-300;
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 300; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-15) break;
  }
  return h;
}

/** Regularised incomplete beta function I_x(a, b), 0 ≤ x ≤ 1. */
export function incompleteBeta(x: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const lnFront = lnGamma(a + b) - lnGamma(a) - lnGamma(b) + a * Math.log(x) + b * Math.log(1 - x);
  const front = Math.exp(lnFront);
  // The continued fraction converges fast only on its own side of the mean; use symmetry otherwise.
  if (x < (a + 1) / (a + b + 2)) return (front * betaContinuedFraction(a, b, x)) / a;
  return 1 - (front * betaContinuedFraction(b, a, 1 - x)) / b;
}

/** Cumulative distribution of Student's t with `dof` degrees of freedom (dof > 0). */
export function studentTCdf(t: number, dof: number): number {
  const tail = 0.5 * incompleteBeta(dof / (dof + t * t), dof / 2, 0.5);
  return t >= 0 ? 1 - tail : tail;
}

/**
 * Quantile of Student's t: the t with P(T ≤ t) = p, 0 < p < 1, dof > 0 (real values allowed).
 * Bisection on the CDF in a bracket that widens until it holds the answer.
 */
export function studentTQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1) || !(dof > 0)) return NaN;
  if (p === 0.5) return 0;
  if (p < 0.5) return -studentTQuantile(1 - p, dof);
  let lo = 0;
  let hi = 2;
  while (studentTCdf(hi, dof) < p && hi < 1e12) {
    lo = hi;
    hi *= 4;
  }
  for (let i = 0; i < 200 && hi - lo > 1e-13 * hi; i++) {
    const mid = 0.5 * (lo + hi);
    if (studentTCdf(mid, dof) < p) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * Squared radius k² of the joint confidence ellipse of two fitted parameters at `level`
 * (points x with (x − x̂)ᵀ Σ⁻¹ (x − x̂) ≤ k²), when Σ is scaled by a variance estimated with `dof`
 * degrees of freedom: k² = 2·F(2, dof; level) = dof·((1 − level)^(−2/dof) − 1), which tends to the
 * χ²(2) quantile −2·ln(1 − level) as dof grows.
 */
export function ellipseRadius2(level: number, dof: number): number {
  if (!Number.isFinite(dof)) return -2 * Math.log(1 - level);
  return dof * (Math.pow(1 - level, -2 / dof) - 1);
}

/** Regularised lower incomplete gamma P(a, x), series below a + 1 and continued fraction above. */
function incompleteGammaP(a: number, x: number): number {
  if (x <= 0) return 0;
  const lnFront = -x + a * Math.log(x) - lnGamma(a);
  if (x < a + 1) {
    let term = 1 / a;
    let sum = term;
    for (let n = 1; n < 500; n++) {
      term *= x / (a + n);
      sum += term;
      if (Math.abs(term) < Math.abs(sum) * 1e-16) break;
    }
    return sum * Math.exp(lnFront);
  }
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < 500; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return 1 - Math.exp(lnFront) * h;
}

/** Standard normal CDF Φ(x), through erf(x/√2) = P(½, x²/2). */
export function normalCdf(x: number): number {
  const half = 0.5 * incompleteGammaP(0.5, (x * x) / 2);
  return x >= 0 ? 0.5 + half : 0.5 - half;
}

/** Standard normal quantile: x with Φ(x) = p, 0 < p < 1 (bisection). */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) return NaN;
  if (p < 0.5) return -normalQuantile(1 - p);
  let lo = 0;
  let hi = 40;
  for (let i = 0; i < 200 && hi - lo > 1e-14; i++) {
    const mid = 0.5 * (lo + hi);
    if (normalCdf(mid) < p) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * Two-sided coverage factor for `level`: Student's t with `dof` degrees of freedom, or the normal
 * quantile when dof is infinite (the spread was taken from a stated uncertainty, not estimated).
 */
export function coverageFactor(level: number, dof: number): number {
  const p = 1 - (1 - level) / 2;
  return Number.isFinite(dof) ? studentTQuantile(p, dof) : normalQuantile(p);
}

/** The lowest of many numbers, by a loop (Math.min(...xs) overflows the call stack past ~10^5 values). */
export function lowest(xs: readonly number[]): number {
  let m = Infinity;
  for (const x of xs) if (x < m) m = x;
  return m;
}

/** The highest of many numbers, by a loop (see lowest). */
export function highest(xs: readonly number[]): number {
  let m = -Infinity;
  for (const x of xs) if (x > m) m = x;
  return m;
}

/**
 * The scatter a fit states once outliers are flagged: the root mean square of the kept readings'
 * residuals over their degrees of freedom (n kept − parameters), never below the meter's own `uDb`. With
 * no outlier, or too few readings kept to estimate it, the fit's own figure (`sigma`, `dof`) stands.
 */
export function keptScatter(
  r: readonly number[],
  used: (i: number) => boolean,
  outliers: readonly number[],
  params: number,
  uDb: number,
  sigma: number,
  dof: number,
): { sigmaDb: number; dof: number } {
  if (!outliers.length) return { sigmaDb: sigma, dof };
  const out = new Set(outliers);
  let ss = 0;
  let n = 0;
  r.forEach((v, i) => {
    if (used(i) && !out.has(i)) {
      ss += v * v;
      n++;
    }
  });
  const dofKept = n - params;
  if (dofKept < 1) return { sigmaDb: sigma, dof };
  const s = Math.sqrt(ss / dofKept);
  return s > uDb
    ? { sigmaDb: s, dof: dofKept }
    : { sigmaDb: uDb > 0 ? uDb : s, dof: uDb > 0 ? Infinity : dofKept };
}
