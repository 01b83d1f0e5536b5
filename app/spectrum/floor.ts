// Runs anywhere (app/ is runtime-free). Robust noise floor of an averaged power spectrum: the median of
// the bins that hold no known component, scaled from median to mean for chi-square bins.
import { check } from '../errors';
import { medianToMean } from './stats';

/** A stretch of bins to leave out: a component's main lobe and a guard. */
export interface Zone {
  /** Fractional bin, in the signed numbering -n/2 .. n/2. */
  center: number;
  /** Bins either side of the centre that are left out. */
  halfWidth: number;
}

/** The smallest mean noise power reported, so a noise-free synthetic spectrum still has a finite floor
 * (-200 dBFS, far below the float32 FFT's own rounding noise). */
export const FLOOR_MINIMUM = 1e-20;

export interface FloorEstimate {
  /** Mean noise power per bin, full-scale units (1.0 = 0 dBFS). */
  mean: number;
  /** Number of bins the median was taken over. */
  bins: number;
}

let values = new Float64Array(4096);
let excluded = new Uint8Array(4096);

/**
 * Mean noise power per bin over bins lo..hi (signed, inclusive, wrapping around the band), leaving out
 * the zones. Returns bins = 0 when every bin was excluded.
 * @param power averaged spectrum in FFT order
 * @param averages number of spectra averaged into it (sets the median-to-mean factor)
 * @param scale factor from `power` to full-scale units
 * @param maxBins take every k-th bin so that at most this many are used (neighbouring bins of a
 *   windowed spectrum are correlated anyway); default all
 */
export function floorBetween(
  power: Float64Array,
  averages: number,
  lo: number,
  hi: number,
  zones: readonly Zone[],
  scale = 1,
  maxBins = Infinity,
): FloorEstimate {
  const n = power.length;
  // Called many times per frame: no message is built unless the check fails.
  if (!(Number.isInteger(lo) && Number.isInteger(hi) && hi >= lo))
    check(false, 'floor.range', `bad bin range ${lo}..${hi}`);
  if (hi - lo + 1 > n) {
    lo = -Math.floor(n / 2);
    hi = lo + n - 1;
  }
  const len = hi - lo + 1;
  if (values.length < len) {
    values = new Float64Array(len);
    excluded = new Uint8Array(len);
  }
  excluded.fill(0, 0, len);
  for (const z of zones) {
    const first = Math.ceil(z.center - z.halfWidth);
    const count = Math.floor(z.center + z.halfWidth) - first + 1;
    let at = (((first - lo) % n) + n) % n;
    for (let i = 0; i < count; i++) {
      if (at < len) excluded[at] = 1;
      if (++at === n) at = 0;
    }
  }
  const step = Math.max(1, Math.ceil(len / maxBins));
  let m = 0;
  let k = ((lo % n) + n) % n;
  for (let j = 0; j < len; j += step) {
    if (!excluded[j]) values[m++] = power[k];
    k += step;
    if (k >= n) k -= n;
  }
  if (m === 0) return { mean: FLOOR_MINIMUM, bins: 0 };
  const median =
    m % 2 === 1
      ? select(values, m, (m - 1) / 2)
      : (select(values, m, m / 2 - 1) + select(values, m, m / 2)) / 2;
  return { mean: Math.max(FLOOR_MINIMUM, median * medianToMean(averages) * scale), bins: m };
}

/** k-th smallest of a[0..m-1] (Hoare's selection; reorders a). */
export function select(a: Float64Array, m: number, k: number): number {
  let left = 0;
  let right = m - 1;
  while (right > left) {
    const pivot = a[(left + right) >> 1];
    let i = left;
    let j = right;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) right = j;
    else if (k >= i) left = i;
    else return a[k];
  }
  return a[k];
}
