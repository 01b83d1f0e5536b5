// Runs in Node (pure, no I/O). The simulated transmitter under test: a balanced modulator whose residual
// carrier is a phasor moved by two trimmers, plus what a real DSB/SSB board puts out besides.
import { Rng } from './rng';

/** One spectral line at the transmitter output. */
export interface Line {
  freqHz: number;
  dbm: number;
}

export interface TransmitterConfig {
  carrierHz: number;
  /** Audio tone offset, Hz (one tone: sidebands at carrier ± tone). */
  toneHz: number;
  /** Peak envelope power of the test signal, dBm. DSB with one tone: PEP = 4 × one sideband (docs/references.md). */
  pepDbm: number;
  mode: 'dsb' | 'usb' | 'lsb';
  /** Opposite-sideband suppression of the SSB filter, dB. */
  oppositeSidebandDb: number;
  /** Trimmer A (resistive balance) and B (reactive balance): where each nulls its own part, in turns. */
  balanceA: number;
  balanceB: number;
  /** Residual-carrier amplitude per unit of trimmer travel, relative to one sideband's amplitude. */
  gainA: number;
  gainB: number;
  /** Angle between the two trimmers' phasor directions, degrees (90 = orthogonal). */
  angleDeg: number;
  /** Incoherent carrier leakage no trimmer setting cancels (layout, coupling), dBc relative to one sideband. */
  leakageDbc: number;
  /** Third- and fifth-order products relative to one sideband, dB. */
  imd3Dbc: number;
  imd5Dbc: number;
  /** Harmonics 2..5 relative to one sideband, dB. */
  harmonicsDbc: [number, number, number, number];
  /** Random-walk drift of the balance point, turns per √second. */
  driftPerSqrtS: number;
  /** Deliberately unbalanced (the reference measurement): carrier near one sideband's level. */
  unbalanced: boolean;
  /**
   * Play in each trimmer, turns: the wiper follows the shaft only once the shaft has taken up this much after
   * a change of direction (so a setting depends on the side it was approached from).
   */
  backlashTurns: number;
  /** The wiper's granularity, turns: where it rests is a whole number of these (0: continuous). */
  wiperStepTurns: number;
}

export const DEFAULT_TRANSMITTER: TransmitterConfig = {
  carrierHz: 7_100_000,
  toneHz: 1_000,
  pepDbm: 30, // 1 W PEP: a small DSB board
  mode: 'dsb',
  oppositeSidebandDb: 45,
  balanceA: 4.3,
  balanceB: 5.8,
  gainA: 0.05,
  gainB: 0.035,
  angleDeg: 70,
  leakageDbc: -64,
  imd3Dbc: -32,
  imd5Dbc: -44,
  harmonicsDbc: [-42, -48, -56, -60],
  driftPerSqrtS: 0.0004,
  unbalanced: false,
  backlashTurns: 0,
  wiperStepTurns: 0,
};

export class SimTransmitter {
  readonly cfg: TransmitterConfig;
  /** Where the builder set the shafts. */
  private trims = { A: 2.0, B: 5.0 };
  /** Where the wipers rest (the shafts less the play taken up, on the wiper's granularity). */
  private wipers = { A: 2.0, B: 5.0 };
  private driftA = 0;
  private driftB = 0;
  private lastT: number | null = null;
  private readonly rng: Rng;

  constructor(cfg: Partial<TransmitterConfig> = {}, seed = 1) {
    this.cfg = { ...DEFAULT_TRANSMITTER, ...cfg };
    this.rng = new Rng(seed ^ 0x5eed);
  }

  setTrims(t: Record<string, number>): void {
    for (const k of ['A', 'B'] as const) {
      const x = t[k];
      if (typeof x !== 'number') continue;
      this.trims[k] = x;
      // Play: the wiper stays put while the shaft turns within half the play either side of it.
      const half = this.cfg.backlashTurns / 2;
      let w = this.wipers[k];
      if (x > w + half) w = x - half;
      else if (x < w - half) w = x + half;
      const g = this.cfg.wiperStepTurns;
      this.wipers[k] = g > 0 ? Math.round(w / g) * g : w;
    }
  }

  /** Where the wipers rest now (what sets the carrier), for tests and benchmarks. */
  wiperPositions(): { A: number; B: number } {
    return { ...this.wipers };
  }

  getTrims(): { A: number; B: number } {
    return { ...this.trims };
  }

  setUnbalanced(on: boolean): void {
    this.cfg.unbalanced = on;
  }

  /** Advances the slow drift of the balance point to time tMs. */
  advance(tMs: number): void {
    if (this.lastT !== null && tMs > this.lastT) {
      const dtS = (tMs - this.lastT) / 1000;
      const s = this.cfg.driftPerSqrtS * Math.sqrt(dtS);
      this.driftA += s * this.rng.normal();
      this.driftB += s * this.rng.normal();
    }
    this.lastT = tMs;
  }

  /** One sideband's power, dBm: PEP − 6.02 dB for DSB with one tone; PEP for SSB with one tone. */
  sidebandDbm(): number {
    return this.cfg.mode === 'dsb' ? this.cfg.pepDbm - 10 * Math.log10(4) : this.cfg.pepDbm;
  }

  /** Residual carrier relative to one sideband, as a power ratio (linear). */
  carrierRatio(): number {
    const c = this.cfg;
    if (c.unbalanced) return 0.5;
    const ea = this.wipers.A - (c.balanceA + this.driftA);
    const eb = this.wipers.B - (c.balanceB + this.driftB);
    const th = (c.angleDeg * Math.PI) / 180;
    // Phasor sum of the two trimmers' contributions along their own directions.
    const re = c.gainA * ea + c.gainB * eb * Math.cos(th);
    const im = c.gainB * eb * Math.sin(th);
    return re * re + im * im + 10 ** (c.leakageDbc / 10);
  }

  /** Where the carrier is deepest now (including drift), for tests and benchmarks. */
  trueBalance(): { A: number; B: number; floorDbc: number } {
    return {
      A: this.cfg.balanceA + this.driftA,
      B: this.cfg.balanceB + this.driftB,
      floorDbc: this.cfg.leakageDbc,
    };
  }

  /** Every line the transmitter emits now. */
  lines(): Line[] {
    const c = this.cfg;
    const sb = this.sidebandDbm();
    const fc = c.carrierHz;
    const f = c.toneHz;
    const out: Line[] = [{ freqHz: fc, dbm: sb + 10 * Math.log10(this.carrierRatio()) }];
    const upperDb = c.mode === 'lsb' ? sb - c.oppositeSidebandDb : sb;
    const lowerDb = c.mode === 'usb' ? sb - c.oppositeSidebandDb : sb;
    out.push({ freqHz: fc + f, dbm: upperDb }, { freqHz: fc - f, dbm: lowerDb });
    out.push(
      { freqHz: fc + 3 * f, dbm: upperDb + c.imd3Dbc },
      { freqHz: fc - 3 * f, dbm: lowerDb + c.imd3Dbc },
    );
    out.push(
      { freqHz: fc + 5 * f, dbm: upperDb + c.imd5Dbc },
      { freqHz: fc - 5 * f, dbm: lowerDb + c.imd5Dbc },
    );
    c.harmonicsDbc.forEach((h, i) => out.push({ freqHz: (i + 2) * fc, dbm: sb + h }));
    return out;
  }
}
