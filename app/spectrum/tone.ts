// Runs anywhere (app/ is runtime-free). Tone power from an averaged spectrum, corrected for the
// window's coherent gain (by the spectrum's scaling) and for scalloping (through the window's exact
// kernel at the tone's offset from the bin centre).
import { Window } from './window';

/** Fractional bin of a frequency, signed: -n/2 <= bin < n/2. */
export function binOf(freqHz: number, sampleRate: number, n: number): number {
  return (freqHz / sampleRate) * n;
}

/** Power in a bin given in signed numbering (wraps around the band). */
export function binPower(power: Float64Array, bin: number): number {
  const n = power.length;
  return power[((bin % n) + n) % n];
}

export interface ToneReading {
  /** Fractional bin (signed numbering) the tone is at. */
  bin: number;
  /** Power in the nearest bin, as read (noise included). */
  binPower: number;
  /** Window amplitude response at the tone's offset from that bin's centre (1 on the centre). */
  response: number;
}

/** Reads the bin nearest a tone whose position is known (e.g. the carrier between two measured tones). */
export function readAt(power: Float64Array, window: Window, bin: number): ToneReading {
  const k0 = Math.round(bin);
  return { bin, binPower: binPower(power, k0), response: window.response(bin - k0) };
}

interface RatioTable {
  /** delta at each table point, -0.5..0.5 */
  delta: Float64Array;
  /** (a[+1] - a[-1]) / a[0] for a tone at delta, increasing with delta */
  ratio: Float64Array;
}

const tables = new WeakMap<Window, RatioTable | null>();
const TABLE_POINTS = 513;

/** Neighbour-ratio curve of the window, or null if it is not monotonic (then no correction is made). */
function ratioTable(window: Window): RatioTable | null {
  let t = tables.get(window);
  if (t !== undefined) return t;
  const delta = new Float64Array(TABLE_POINTS);
  const ratio = new Float64Array(TABLE_POINTS);
  for (let i = 0; i < TABLE_POINTS; i++) {
    const d = -0.5 + i / (TABLE_POINTS - 1);
    delta[i] = d;
    ratio[i] = (window.response(1 - d) - window.response(1 + d)) / window.response(d);
  }
  let monotonic = true;
  for (let i = 1; i < TABLE_POINTS; i++) if (!(ratio[i] > ratio[i - 1])) monotonic = false;
  t = monotonic ? { delta, ratio } : null;
  tables.set(window, t);
  return t;
}

/**
 * Finds the strongest bin within `search` bins of `approx` and the tone's fractional position, from the
 * ratio of its neighbours inverted through the window's kernel. Exact for a lone noise-free tone;
 * noise and nearby components bias it, so use it for components well above the floor.
 */
export function findPeak(power: Float64Array, window: Window, approx: number, search: number): ToneReading {
  const c = Math.round(approx);
  const s = Math.max(0, Math.floor(search));
  let k0 = c;
  let best = -1;
  for (let k = c - s; k <= c + s; k++) {
    const p = binPower(power, k);
    if (p > best) {
      best = p;
      k0 = k;
    }
  }
  let delta = 0;
  const table = ratioTable(window);
  if (table && best > 0) {
    const r = (Math.sqrt(binPower(power, k0 + 1)) - Math.sqrt(binPower(power, k0 - 1))) / Math.sqrt(best);
    delta = invert(table, r);
  }
  return { bin: k0 + delta, binPower: best, response: window.response(delta) };
}

function invert(t: RatioTable, r: number): number {
  const last = t.ratio.length - 1;
  if (r <= t.ratio[0]) return t.delta[0];
  if (r >= t.ratio[last]) return t.delta[last];
  let lo = 0;
  let hi = last;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (t.ratio[mid] <= r) lo = mid;
    else hi = mid;
  }
  const f = (r - t.ratio[lo]) / (t.ratio[hi] - t.ratio[lo]);
  return t.delta[lo] + f * (t.delta[hi] - t.delta[lo]);
}
