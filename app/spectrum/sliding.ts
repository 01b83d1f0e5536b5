// Runs anywhere (app/ is runtime-free). A moving average of the last k power spectra: a new picture after
// every frame instead of after every k, so a trimmer's turn shows one frame after it happens. A step in the
// carrier's level (far beyond what noise does to one frame) starts the average afresh from the frame that
// shows it, so the old level does not linger for k frames.
import { check } from '../errors';
import type { AveragedSpectrum } from './averager';
import type { Window } from './window';

/** A change of the carrier's power between one frame and the average before it that restarts the average, dB. */
export const STEP_RESTART_DB = 10;

export class SlidingSpectrum {
  private readonly ring: Float64Array[];
  private readonly sum: Float64Array;
  private count = 0;
  private next = 0;
  private sinceExact = 0;

  constructor(
    readonly window: Window,
    readonly frames: number,
  ) {
    check(Number.isInteger(frames) && frames >= 1, 'averages', `must be a whole number ≥ 1, got ${frames}`);
    this.ring = Array.from({ length: frames }, () => new Float64Array(window.n));
    this.sum = new Float64Array(window.n);
  }

  /** Frames in the average now (fewer than `frames` just after a start or a restart). */
  get averages(): number {
    return this.count;
  }

  /** Forgets every frame. */
  restart(): void {
    this.count = 0;
    this.next = 0;
    this.sum.fill(0);
  }

  /**
   * Adds one frame's |X|² sums (SpectrumAverager.sums() after one frame). When bins [lo, hi] (FFT order,
   * wrapping) hold STEP_RESTART_DB more or less power than the average so far, the average restarts from
   * this frame; true then.
   */
  push(frame: Float64Array, carrierBins?: [number, number]): boolean {
    let restarted = false;
    if (carrierBins && this.count > 0) {
      const now = bandSum(frame, carrierBins);
      const before = bandSum(this.sum, carrierBins) / this.count;
      if (now > 0 && before > 0 && Math.abs(10 * Math.log10(now / before)) > STEP_RESTART_DB) {
        this.restart();
        restarted = true;
      }
    }
    const slot = this.ring[this.next];
    const sum = this.sum;
    const full = this.count === this.frames;
    for (let i = 0; i < sum.length; i++) {
      if (full) sum[i] -= slot[i];
      slot[i] = frame[i];
      sum[i] += frame[i];
    }
    this.next = (this.next + 1) % this.frames;
    this.count = Math.min(this.frames, this.count + 1);
    // Subtracting leaves rounding behind: the sum is made afresh from the frames once per turn of the ring.
    if (++this.sinceExact >= this.frames) {
      this.sinceExact = 0;
      sum.fill(0);
      for (let f = 0; f < this.count; f++) {
        const r = this.ring[(this.next - 1 - f + this.frames) % this.frames];
        for (let i = 0; i < sum.length; i++) sum[i] += r[i];
      }
    }
    return restarted;
  }

  /** The moving average as measureSpectrum() takes it (valid until the next push). */
  spectrum(): AveragedSpectrum {
    check(this.count > 0, 'averages', 'no frames have been added yet');
    return {
      power: this.sum,
      scale: 1 / (this.count * this.window.sum * this.window.sum),
      averages: this.count,
      window: this.window,
    };
  }
}

function bandSum(p: Float64Array, [lo, hi]: [number, number]): number {
  const n = p.length;
  let s = 0;
  for (let k = lo; k <= hi; k++) s += p[((k % n) + n) % n];
  return s;
}
