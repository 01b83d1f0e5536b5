// Runs in Node. The one small interface every level source implements, and the record that declares
// a driver: identity, how its spec is written, what it can do (declared up front, not discovered).

/** What the number a source returns means; the calibration maps it to dBm at the receiver input. */
export type RawQuantity = 'strength-db' | 'raw' | 's-units' | 'dbm';

export interface RawSample {
  raw: number;
  quantity: RawQuantity;
  freqHz: number;
  /** ms since the epoch (virtual on a simulated bench running in compressed time). */
  t: number;
}

export interface SourceCaps {
  /** Can retune the receiver. */
  tune: boolean;
  /** Moves the trimmers itself (only the simulated bench can). */
  trims: boolean;
  /** Can unbalance the modulator for the reference measurement (simulated bench). */
  unbalance: boolean;
}

export interface LevelSource {
  readonly kind: string;
  readonly spec: string;
  readonly caps: SourceCaps;
  /** The receiver's noise floor at the antenna socket, dBm, when the source knows it. */
  readonly noiseFloorDbm?: number;
  open(): Promise<void>;
  close(): Promise<void>;
  setFrequency(hz: number): Promise<void>;
  read(): Promise<RawSample>;
  setTrims?(trims: Record<string, number>): Promise<void>;
  setUnbalanced?(on: boolean): Promise<void>;
  /** The source's clock, ms since the epoch. */
  now(): number;
  /** Waits ms on the source's clock (instant on a virtual clock). */
  sleep(ms: number): Promise<void>;
}

export interface SourceDriver {
  kind: string;
  /** One line for --help. */
  summary: string;
  /** How the spec is written, e.g. "sim[:seed=N,loss=DB,fast]". */
  syntax: string;
  caps: SourceCaps;
  /** True when this driver handles the spec (by its prefix). */
  matches(spec: string): boolean;
  /** Builds a source from a spec; throws BenchError EINVAL naming the bad part. */
  create(spec: string): LevelSource;
}
