// Runs anywhere (app/ is runtime-free). Has a level settled enough to be kept?
//
// After a trimmer is moved or the receiver retuned, the reading wanders while the meter's averaging and
// the circuit settle. A reading is kept once the last `windowCount` readings all lie within
// ±toleranceDb of their mean; if that never happens within timeoutMs of the first reading, the latest
// state is reported as timed out so the caller can keep it flagged rather than wait for ever.

import { check, finiteIn } from '../errors';
import { dbmToMw, mwToDbm } from './readings';

export interface SettleOptions {
  /** Readings that must agree, 2–1000. */
  windowCount: number;
  /** Half-width of the agreement band, dB, 0.001–60. */
  toleranceDb: number;
  /** Give up (flag) after this long since the first reading, ms, > 0. */
  timeoutMs: number;
  /**
   * Largest drift allowed between the mean of the older and of the newer half of the window, dB
   * (default toleranceDb / 2). A meter still decaying slowly towards a deep null can stay within
   * ±tolerance for a whole window while it is still dB away from the level; the drift test catches that.
   */
  trendDb?: number;
  /**
   * Shortest time the window must span, ms ≥ 0; default 0 (the window is windowCount readings, however
   * quickly they come). A meter decaying with time constant τ towards a deeper level passes the drift test
   * over a short window while still well above it: the drift between the halves of a window spanning T is
   * about R·(e^(T/2τ) − 1) for a remaining error R, so only a window spanning a few τ bounds R. The window
   * then holds every reading of the last minSpanMs (and at least windowCount).
   */
  minSpanMs?: number;
}

export interface SettleState {
  /** The window is full and every reading in it lies within ±toleranceDb of the window's mean. */
  settled: boolean;
  /** timeoutMs has passed since the first reading without settling. */
  timedOut: boolean;
  /** Mean of the window as a power average (the level a longer measurement would show), dBm. */
  meanDbm: number;
  /** Highest minus lowest reading in the window, dB. */
  spreadDb: number;
  /** Readings in the window (windowCount, or more when minSpanMs needs them). */
  count: number;
}

export class SettleDetector {
  readonly windowCount: number;
  readonly toleranceDb: number;
  readonly timeoutMs: number;
  readonly trendDb: number;
  readonly minSpanMs: number;
  private window: number[] = [];
  private times: number[] = [];
  private startMs: number | null = null;
  private lastMs = -Infinity;

  constructor(opts: SettleOptions) {
    check(
      typeof opts === 'object' && opts !== null,
      'SettleDetector',
      'needs { windowCount, toleranceDb, timeoutMs }',
    );
    check(
      Number.isInteger(opts.windowCount),
      'SettleDetector.windowCount',
      `must be a whole number, got ${opts.windowCount}`,
    );
    this.windowCount = finiteIn(opts.windowCount, 'SettleDetector.windowCount', 2, 1000);
    this.toleranceDb = finiteIn(opts.toleranceDb, 'SettleDetector.toleranceDb', 0.001, 60, 'dB');
    this.timeoutMs = finiteIn(opts.timeoutMs, 'SettleDetector.timeoutMs', 1, 1e9, 'ms');
    this.trendDb = finiteIn(opts.trendDb ?? this.toleranceDb / 2, 'SettleDetector.trendDb', 0.001, 60, 'dB');
    this.minSpanMs = finiteIn(opts.minSpanMs ?? 0, 'SettleDetector.minSpanMs', 0, 1e7, 'ms');
  }

  /**
   * Add one reading.
   * @param dbm the level, dBm
   * @param tMs its time, ms on any steady clock; never earlier than the previous reading's
   */
  push(dbm: number, tMs: number): SettleState {
    finiteIn(dbm, 'SettleDetector.push(dbm)', -300, 100, 'dBm');
    check(Number.isFinite(tMs), 'SettleDetector.push(tMs)', `must be a finite time in ms, got ${tMs}`);
    check(
      tMs >= this.lastMs,
      'SettleDetector.push(tMs)',
      `went back in time: ${tMs} ms after ${this.lastMs} ms`,
    );
    this.lastMs = tMs;
    if (this.startMs === null) this.startMs = tMs;
    this.window.push(dbm);
    this.times.push(tMs);
    // Drop the oldest reading while the rest still hold windowCount readings spanning minSpanMs.
    while (
      this.window.length > this.windowCount &&
      (this.minSpanMs === 0 || tMs - this.times[1] >= this.minSpanMs)
    ) {
      this.window.shift();
      this.times.shift();
    }
    return this.state(tMs);
  }

  /** Forget everything: the next push starts a new wait (after moving a trimmer or retuning). */
  reset(): void {
    this.window = [];
    this.times = [];
    this.startMs = null;
    this.lastMs = -Infinity;
  }

  toString(): string {
    const span = this.minSpanMs > 0 ? ` over at least ${this.minSpanMs} ms` : '';
    return `SettleDetector(${this.windowCount} readings${span} within ±${this.toleranceDb} dB, timeout ${this.timeoutMs} ms)`;
  }

  private state(tMs: number): SettleState {
    const w = this.window;
    const meanDbm = mwToDbm(w.reduce((s, x) => s + dbmToMw(x), 0) / w.length);
    const spreadDb = Math.max(...w) - Math.min(...w);
    // A hair of slack so that readings exactly on the band edge count as inside despite rounding.
    const half = Math.floor(w.length / 2);
    let drift = 0;
    for (let i = 0; i < half; i++) drift += w[w.length - 1 - i] - w[i];
    drift = half > 0 ? Math.abs(drift) / half : 0;
    const full = w.length >= this.windowCount && tMs - this.times[0] >= this.minSpanMs - 1e-9;
    const settled =
      full &&
      w.every((x) => Math.abs(x - meanDbm) <= this.toleranceDb + 1e-9) &&
      drift <= this.trendDb + 1e-9;
    const timedOut = !settled && tMs - (this.startMs ?? tMs) >= this.timeoutMs;
    return { settled, timedOut, meanDbm, spreadDb, count: w.length };
  }
}
