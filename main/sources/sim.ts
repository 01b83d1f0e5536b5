// Runs in Node. The simulated bench as a level source: the default, so Nullbench runs with no hardware.
import { BenchError } from '../../app/errors';
import { SimBench } from '../sim/bench';
import type { LevelSource, RawSample, SessionSetup, SourceCaps, SourceDriver } from './types';

const CAPS: SourceCaps = { tune: true, trims: true, unbalance: true, simulated: true };

export interface SimSpec {
  seed: number;
  /** The pad between transmitter and receiver; unset: the session's declared path (50 dB without a session). */
  lossDb?: number;
  virtualTime: boolean;
  carrierHz?: number;
  toneHz?: number;
  pepDbm?: number;
  leakageDbc?: number;
  startMs?: number;
  /** The meter's steps: 's-units', or a step in dB (1 by default, 0.1 for a fine readout). */
  meter?: 's-units' | number;
  /** The meter's decay time constant, ms (a slow meter: 2000 and more). */
  decayMs?: number;
  /** Play in each trimmer, turns. */
  playTurns?: number;
  /** Each trimmer wiper's granularity, turns. */
  grainTurns?: number;
}

const KEYS = 'seed, loss, carrier, tone, pep, leak, t0, meter, decay, play, grain';

/**
 * Parses "sim", "sim:seed=7", "sim:seed=7,loss=50,fast" (fast = virtual clock, no waiting),
 * "sim:meter=s,play=0.02" (an S-unit meter, trimmers with play).
 */
export function parseSimSpec(spec: string): SimSpec {
  const out: SimSpec = { seed: 1, virtualTime: false };
  const rest = spec.trim().slice(3);
  if (rest === '') return out;
  if (!rest.startsWith(':'))
    throw new BenchError('EINVAL', `expected "sim" or "sim:key=value,...", got "${spec}"`, 'source');
  for (const [i, part] of rest.slice(1).split(',').entries()) {
    if (part === '') continue;
    if (part === 'fast') {
      out.virtualTime = true;
      continue;
    }
    const [k, v, extra] = part.split('=');
    const n = Number(v);
    const where = `source item ${i + 1} ("${part}")`;
    if (k === 'meter' && (v === 's' || v === 's-units') && extra === undefined) {
      out.meter = 's-units';
      continue;
    }
    if (extra !== undefined || v === undefined || v.trim() === '' || !Number.isFinite(n))
      throw new BenchError('EINVAL', `expected key=number (${KEYS}), meter=s (S-units) or "fast"`, where);
    if (k === 'seed') out.seed = Math.trunc(n);
    else if (k === 'loss') {
      if (n < 0 || n > 120) throw new BenchError('EINVAL', 'path loss must be 0..120 dB', where);
      out.lossDb = n;
    } else if (k === 'carrier') out.carrierHz = n;
    else if (k === 'tone') out.toneHz = n;
    else if (k === 'pep') out.pepDbm = n;
    else if (k === 'leak') out.leakageDbc = n;
    else if (k === 't0') out.startMs = n;
    else if (k === 'meter') {
      if (n < 0.01 || n > 10) throw new BenchError('EINVAL', 'a meter step must be 0.01..10 dB, or s', where);
      out.meter = n;
    } else if (k === 'decay') {
      if (n < 1 || n > 60_000) throw new BenchError('EINVAL', 'the meter decay must be 1..60000 ms', where);
      out.decayMs = n;
    } else if (k === 'play' || k === 'grain') {
      if (n < 0 || n > 1) throw new BenchError('EINVAL', `${k} must be 0..1 turn`, where);
      if (k === 'play') out.playTurns = n;
      else out.grainTurns = n;
    } else throw new BenchError('EINVAL', `unknown key "${k}" (use ${KEYS} or fast)`, where);
  }
  return out;
}

export class SimSource implements LevelSource {
  readonly kind = 'sim';
  readonly caps = CAPS;
  readonly bench: SimBench;

  constructor(
    readonly spec: string,
    private readonly opts: SimSpec,
  ) {
    this.bench = new SimBench({
      seed: opts.seed,
      pathLossDb: opts.lossDb,
      virtualTime: opts.virtualTime,
      startMs: opts.startMs,
      receiver: {
        ...(opts.meter === 's-units' ? { meterScale: 's-units' as const } : {}),
        ...(typeof opts.meter === 'number' ? { quantDb: opts.meter } : {}),
        ...(opts.decayMs !== undefined ? { decayMs: opts.decayMs } : {}),
      },
      transmitter: {
        ...(opts.playTurns !== undefined ? { backlashTurns: opts.playTurns } : {}),
        ...(opts.grainTurns !== undefined ? { wiperStepTurns: opts.grainTurns } : {}),
        ...(opts.leakageDbc !== undefined ? { leakageDbc: opts.leakageDbc } : {}),
        ...(opts.carrierHz ? { carrierHz: opts.carrierHz } : {}),
        ...(opts.toneHz ? { toneHz: opts.toneHz } : {}),
        ...(opts.pepDbm !== undefined ? { pepDbm: opts.pepDbm } : {}),
      },
    });
  }

  /**
   * The lowest level the simulated receiver can measure: its noise in the bandwidth, or the bottom of its
   * meter's scale where that is higher (S9 − 54 dB = −127 dBm against about −135 dBm of noise), below which
   * every reading is pegged.
   */
  get noiseFloorDbm(): number {
    const rx = this.bench.rx;
    return Math.max(rx.noiseFloorDbm(), rx.cfg.s9Dbm + rx.cfg.meterMinDb);
  }

  /**
   * Builds the simulated bench to the session's declaration: the board transmits the declared PEP on the
   * declared carrier and tone, through a pad of the declared path's loss. What the spec states wins (a spec's
   * loss=60 under a 50 dB declaration simulates a wrong pad declaration).
   */
  declareSetup(setup: SessionSetup): void {
    const o = this.opts;
    const cfg = this.bench.tx.cfg;
    if (o.lossDb === undefined) this.bench.pathLossDb = setup.pathLossDb;
    if (o.pepDbm === undefined) cfg.pepDbm = setup.txPepDbm;
    if (!o.carrierHz) cfg.carrierHz = setup.carrierHz;
    if (!o.toneHz) cfg.toneHz = setup.toneHz;
    this.bench.rx.tune(cfg.carrierHz);
  }

  /** The meter's step near a null, dB: the guide's reading uncertainty follows from it. */
  get meterStepDb(): number {
    return this.bench.rx.stepDb;
  }

  async open(): Promise<void> {}
  async close(): Promise<void> {}

  async setFrequency(hz: number): Promise<void> {
    this.bench.rx.tune(hz);
  }

  async read(): Promise<RawSample> {
    if (!this.bench.virtualTime) await new Promise((r) => setTimeout(r, this.bench.rx.cfg.latencyMs));
    const m = this.bench.read();
    return { raw: m.strengthDb, quantity: 'strength-db', freqHz: m.freqHz, t: m.t };
  }

  async setTrims(trims: Record<string, number>): Promise<void> {
    this.bench.tx.setTrims(trims);
  }

  async setUnbalanced(on: boolean): Promise<void> {
    this.bench.tx.setUnbalanced(on);
  }

  now(): number {
    return this.bench.now();
  }

  async sleep(ms: number): Promise<void> {
    if (this.bench.virtualTime) this.bench.wait(ms);
    else await new Promise((r) => setTimeout(r, ms));
  }
}

export const simDriver: SourceDriver = {
  kind: 'sim',
  summary: 'the built-in simulated bench (a DSB transmitter with two balance trimmers, a receiver, a pad)',
  syntax:
    'sim[:seed=N,loss=DB,carrier=HZ,tone=HZ,pep=DBM,leak=DBC,meter=s|DB,decay=MS,play=TURNS,grain=TURNS,fast]',
  caps: CAPS,
  matches: (spec) => spec === 'sim' || spec.startsWith('sim:'),
  create: (spec) => new SimSource(spec, parseSimSpec(spec)),
};
