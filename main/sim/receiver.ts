// Runs in Node (pure, no I/O). The simulated receiver used as a selective level meter: a tuned filter,
// a thermal noise floor, front-end compression, an S-meter with attack/decay, and the steps its reading moves
// in: 1 dB (the default), 0.1 dB, or S-units (6 dB below S9, 10 dB above, as many receivers report them).
import { R1_DB_PER_S, powerSumDb, thermalNoiseDbm } from '../../app/levels';
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
  /** Meter reading step, dB, on a 'db' scale. */
  quantDb: number;
  /**
   * 'db': steps of quantDb. 's-units': the S-unit the level has reached, 6 dB apart below S9 and 10 dB apart
   * above (IARU Region 1 R.1 defines S-units 6 dB apart; the coarser steps above S9 are what many receivers
   * report over their control link, common practice).
   */
  meterScale: 'db' | 's-units';
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
  meterScale: 'db',
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
    return { strengthDb: meterStep(clamped, c), trueInputDbm: input };
  }

  /** The smallest step the meter's reading moves in near a null (below S9), dB. */
  get stepDb(): number {
    return this.cfg.meterScale === 's-units' ? R1_DB_PER_S : this.cfg.quantDb;
  }
}

/** A step above S9 on the S-unit scale, dB (common practice). */
export const OVER_S9_STEP_DB = 10;

/** What the meter shows for a level in dB relative to S9. */
export function meterStep(db: number, c: Pick<ReceiverConfig, 'quantDb' | 'meterScale'>): number {
  if (c.meterScale === 's-units') {
    // The S-unit reached: S8 from -6 dB up to S9, S9+10 from +10 dB up to +20.
    const step = db < 0 ? R1_DB_PER_S : OVER_S9_STEP_DB;
    return Math.floor(db / step + 1e-9) * step;
  }
  // Rounded to the step, and to a whole number of them (0.1 dB steps read 0.3, not 0.30000000000000004).
  const n = Math.round(db / c.quantDb);
  return Number((n * c.quantDb).toFixed(6));
}
