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
  /** Can set the receive mode and passband (network rig control). */
  mode?: boolean;
  /** Talks over a link that can break: errors are soft (ETIMEOUT, EPROTO) or need a reconnect (EIO). */
  reconnect?: boolean;
  /** Speaks through a command-set template (app/serialtemplate), given in full, by name, or in the spec. */
  template?: boolean;
  /** The built-in simulated bench, not a real receiver. */
  simulated?: boolean;
}

/** What a driver may need besides its spec: a serial command-set template (already validated). */
export interface SourceEnv {
  template?: unknown;
}

/** What a session declares about the set-up, nominal values (the path's loss from its elements). */
export interface SessionSetup {
  pathLossDb: number;
  txPepDbm: number;
  carrierHz: number;
  toneHz: number;
}

export interface LevelSource {
  readonly kind: string;
  readonly spec: string;
  readonly caps: SourceCaps;
  /** The receiver's noise floor at the antenna socket, dBm, when the source knows it. */
  readonly noiseFloorDbm?: number;
  /**
   * The smallest step the receiver's reading moves in near a null, dB, when the source knows it (a meter read
   * in S-units: 6). Each reading's uncertainty takes step/√12 for it (GUM 4.3.7, uniform; 1 dB when not
   * declared), and so does the guide's.
   */
  readonly meterStepDb?: number;
  /** What read() returns, when known before the first reading (after open() for sources that ask the receiver). */
  readonly quantity?: RawQuantity;
  open(): Promise<void>;
  close(): Promise<void>;
  setFrequency(hz: number): Promise<void>;
  read(): Promise<RawSample>;
  setTrims?(trims: Record<string, number>): Promise<void>;
  setUnbalanced?(on: boolean): Promise<void>;
  /** A simulated source builds its bench to what the session declares; real receivers have no such call. */
  declareSetup?(setup: SessionSetup): void;
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
  create(spec: string, env?: SourceEnv): LevelSource;
  /** What read() will return for this spec, known before connecting (default: strength-db). */
  quantity?(spec: string, env?: SourceEnv): RawQuantity;
}
