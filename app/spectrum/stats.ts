// Runs anywhere (app/ is runtime-free). Statistics of averaged power-spectrum bins of Gaussian noise.
//
// One FFT bin of complex Gaussian noise has an exponentially distributed power (chi-square, 2 degrees
// of freedom). The mean of K independent such bins, divided by its expectation, is Gamma(K, 1/K):
// P(Y > x) = exp(-Kx) * sum_{i<K} (Kx)^i / i!. Its median is below the mean (ln 2 = -1.59 dB for K = 1),
// so a median-based floor must be scaled up to read as the mean noise power.
import { check } from '../errors';

const EXACT_LIMIT = 1000;

/** P(Y > x) for Y = mean of k unit-mean exponentials, x >= 0. */
export function averagedTail(x: number, k: number): number {
  if (x <= 0) return 1;
  if (k > EXACT_LIMIT) {
    // Wilson-Hilferty: (Y)^(1/3) is nearly normal with mean 1 - 1/(9k), variance 1/(9k).
    const v = 1 / (9 * k);
    const z = (Math.cbrt(x) - (1 - v)) / Math.sqrt(v);
    return 0.5 * erfc(z / Math.SQRT2);
  }
  const lambda = k * x;
  // log-sum-exp over the Poisson terms so exp(-lambda) cannot underflow.
  const logLambda = Math.log(lambda);
  let logTerm = -lambda;
  let maxLog = logTerm;
  const logs: number[] = [logTerm];
  for (let i = 1; i < k; i++) {
    logTerm += logLambda - Math.log(i);
    logs.push(logTerm);
    if (logTerm > maxLog) maxLog = logTerm;
  }
  let s = 0;
  for (const l of logs) s += Math.exp(l - maxLog);
  return Math.min(1, Math.exp(maxLog) * s);
}

/** Complementary error function (Numerical Recipes erfcc, relative error < 1.2e-7). */
function erfc(x: number): number {
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const r =
    t *
    Math.exp(
      -z * z -
        1.26551223 +
        t *
          (1.00002368 +
            t *
              (0.37409196 +
                t *
                  (0.09678418 +
                    t *
                      (-0.18628806 +
                        t *
                          (0.27886807 +
                            t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  return x >= 0 ? r : 2 - r;
}

/** x with P(Y > x) = p (0 < p < 1), by bisection. */
function tailQuantile(p: number, k: number): number {
  let lo = 0;
  let hi = 1;
  while (averagedTail(hi, k) > p) hi *= 2;
  for (let i = 0; i < 80; i++) {
    const mid = (lo + hi) / 2;
    if (averagedTail(mid, k) > p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

const medianCache = new Map<number, number>();
const thresholdCache = new Map<string, number>();

function checkAverages(k: number): void {
  check(
    Number.isInteger(k) && k >= 1,
    'averages',
    `must be a whole number of spectra >= 1, got ${String(k)}`,
  );
}

/** Mean / median of the average of k noise-only power bins: multiply a median floor by this. */
export function medianToMean(k: number): number {
  let r = medianCache.get(k);
  if (r === undefined) {
    checkAverages(k);
    r = 1 / tailQuantile(0.5, k);
    medianCache.set(k, r);
  }
  return r;
}

/**
 * The level, as a multiple of the mean noise power, that an average of k noise-only bins exceeds
 * with probability p. A component must stand above it to count as seen rather than noise.
 */
export function noiseExceedance(k: number, p: number): number {
  const key = `${k}:${p}`;
  let r = thresholdCache.get(key);
  if (r === undefined) {
    checkAverages(k);
    check(p > 0 && p < 1, 'probability', `must be between 0 and 1, got ${String(p)}`);
    r = tailQuantile(p, k);
    thresholdCache.set(key, r);
  }
  return r;
}
