// Runs in Node (pure, no I/O). The simulated bench: transmitter → physical path → receiver, on a clock
// that is either the wall clock or a virtual one (tests and benchmarks run thousands of readings at once).
import { SimReceiver, type ReceiverConfig } from './receiver';
import { SimTransmitter, type TransmitterConfig } from './transmitter';
import { Rng } from './rng';

export interface SimBenchOptions {
  seed?: number;
  transmitter?: Partial<TransmitterConfig>;
  receiver?: Partial<ReceiverConfig>;
  /** True attenuation of the path between DUT and receiver, dB (the user declares it separately). */
  pathLossDb?: number;
  /** Virtual clock: each reading advances time by the receiver's latency instead of waiting for it. */
  virtualTime?: boolean;
  /** Start of the virtual clock, ms since the epoch. */
  startMs?: number;
}

export class SimBench {
  readonly tx: SimTransmitter;
  readonly rx: SimReceiver;
  pathLossDb: number;
  readonly virtualTime: boolean;
  private clockMs: number;

  constructor(opts: SimBenchOptions = {}) {
    const seed = opts.seed ?? 1;
    // Every seed is another board: its balance points and trimmer gains differ as real ones do.
    const vary = new Rng(seed * 7919 + 17);
    const board: Partial<TransmitterConfig> = {
      balanceA: 3.5 + 2 * vary.next(),
      // The reactive balance is the finer one on a diode ring: its trimmer moves the residual less per turn.
      balanceB: 4 + 2 * vary.next(),
      gainA: 0.04 + 0.02 * vary.next(),
      gainB: 0.01 + 0.01 * vary.next(),
      angleDeg: 55 + 35 * vary.next(),
    };
    this.tx = new SimTransmitter({ ...board, ...opts.transmitter }, seed);
    this.rx = new SimReceiver(opts.receiver, seed);
    this.pathLossDb = opts.pathLossDb ?? 50;
    this.virtualTime = opts.virtualTime ?? false;
    this.clockMs = opts.startMs ?? Date.UTC(2026, 0, 1);
    this.rx.tune(this.tx.cfg.carrierHz);
  }

  now(): number {
    return this.virtualTime ? this.clockMs : Date.now();
  }

  /** Lets virtual time pass (turning a trimmer takes a moment too). */
  wait(ms: number): void {
    if (this.virtualTime) this.clockMs += ms;
  }

  /** One reading: strength in dB relative to S9, at the tuned frequency, and the time it was taken. */
  read(): { strengthDb: number; t: number; freqHz: number; trueInputDbm: number } {
    if (this.virtualTime) this.clockMs += this.rx.cfg.latencyMs;
    const t = this.now();
    this.tx.advance(t);
    const lines = this.tx.lines().map((l) => ({ freqHz: l.freqHz, dbm: l.dbm - this.pathLossDb }));
    const m = this.rx.read(lines, t);
    return { strengthDb: m.strengthDb, t, freqHz: this.rx.frequencyHz, trueInputDbm: m.trueInputDbm };
  }
}
