// Runs in Node (pure, no I/O). The simulated receiver used as a selective level meter: a tuned filter,
// a thermal noise floor, front-end compression, an S-meter with attack/decay, 1 dB quantisation.
import { powerSumDb, thermalNoiseDbm } from '../../app/levels';
import type { Line } from './transmitter';
import { Rng } from './rng';

export interface ReceiverConfig {
  /** -6 dB bandwidth of the selected filter, Hz. */
  bandwidthHz: number;
  /** Filter order: |H|² = 1 / (1 + (2Δf/B)^(2·order)), with an ultimate stopband below. */
  filterOrder: number;
  stopbandDb: number;
  noiseFigureDb: number;
  /** Input level at which the front end is 1 dB compressed, dBm. */
  compressionDbm: number;
  /** S-meter: S9 at this input level, dBm (IARU R.1: -73 dBm below 30 MHz), and its range relative to S9. */
  s9Dbm: number;
  meterMinDb: number;
  meterMaxDb: number;
  /** Meter reading step, dB. */
  quantDb: number;
  /** Meter ballistics (R.1: attack 10 ms, decay time constant ≥ 500 ms). */
  attackMs: number;
  decayMs: number;
  /** Time one reading takes over the control link, ms. */
  latencyMs: number;
}

export const DEFAULT_RECEIVER: ReceiverConfig = {
  bandwidthHz: 500,
  filterOrder: 8,
  stopbandDb: -95,
  noiseFigureDb: 12,
  compressionDbm: -5,
  s9Dbm: -73,
  meterMinDb: -54,
  meterMaxDb: 60,
  quantDb: 1,
  attackMs: 10,
  decayMs: 500,
  latencyMs: 40,
};

export interface MeterReading {
  /** Strength in dB relative to S9, as the rig-control protocol reports it. */
  strengthDb: number;
  /** What the meter would show without quantisation (for tests). */
  trueInputDbm: number;
}

export class SimReceiver {
  readonly cfg: ReceiverConfig;
  private tunedHz = 7_100_000;
  private meterDb: number | null = null;
  private lastT: number | null = null;
  private readonly rng: Rng;

  constructor(cfg: Partial<ReceiverConfig> = {}, seed = 1) {
    this.cfg = { ...DEFAULT_RECEIVER, ...cfg };
    this.rng = new Rng(seed ^ 0xacce55);
  }

  tune(hz: number): void {
    if (hz !== this.tunedHz) this.meterDb = null; // retuning restarts the meter's ballistics
    this.tunedHz = hz;
  }

  get frequencyHz(): number {
    return this.tunedHz;
  }

  /** Power response of the filter at an offset from the tuned frequency, dB (≤ 0). */
  responseDb(offsetHz: number): number {
    const x = (2 * Math.abs(offsetHz)) / this.cfg.bandwidthHz;
    const db = -10 * Math.log10(1 + x ** (2 * this.cfg.filterOrder));
    return Math.max(db, this.cfg.stopbandDb);
  }

  noiseFloorDbm(): number {
    return thermalNoiseDbm(this.cfg.bandwidthHz, this.cfg.noiseFigureDb);
  }

  /** Power in the passband from the given lines at the antenna socket, dBm, before noise. */
  passbandDbm(lines: Line[]): number {
    const parts = lines.map((l) => l.dbm + this.responseDb(l.freqHz - this.tunedHz));
    return powerSumDb(...parts);
  }

  /**
   * One meter reading at time tMs of the given lines (already attenuated by the path to the receiver).
   * Noise is averaged over the meter's integration, so it fluctuates by a fraction of a dB.
   */
  read(lines: Line[], tMs: number): MeterReading {
    const c = this.cfg;
    const signal = this.passbandDbm(lines);
    // Noise power fluctuates; the meter's detector averages it roughly over ~20 independent samples.
    const noise =
      this.noiseFloorDbm() + 10 * Math.log10(Math.max(0.2, 1 + this.rng.normal() / Math.sqrt(20)));
    let input = powerSumDb(signal, noise);
    // Soft compression above the 1 dB point: the meter reads low when the front end is overdriven.
    const total = powerSumDb(...lines.map((l) => l.dbm));
    const over = total - c.compressionDbm;
    if (over > -6) input -= Math.max(0, 1 + 0.8 * over) * (over > 0 ? 1 : Math.exp(over));
    const target = input - c.s9Dbm;
    // Meter ballistics: fast attack, slow decay, exponential in the elapsed time.
    if (this.meterDb === null || this.lastT === null) this.meterDb = target;
    else {
      const dt = Math.max(0, tMs - this.lastT);
      const tau = target > this.meterDb ? c.attackMs : c.decayMs;
      this.meterDb = target + (this.meterDb - target) * Math.exp(-dt / tau);
    }
    this.lastT = tMs;
    const clamped = Math.min(c.meterMaxDb, Math.max(c.meterMinDb, this.meterDb));
    const strengthDb = Math.round(clamped / c.quantDb) * c.quantDb;
    return { strengthDb, trueInputDbm: input };
  }
}
