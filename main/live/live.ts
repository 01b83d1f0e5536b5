// Runs in Node. The live bench: polls the active session's source, corrects each reading, stores every
// reading of an open session (nothing is thrown away), tracks settling, and keeps points on request.
import { EventEmitter } from 'node:events';
import {
  roleFrequencyHz,
  type LiveReading,
  type PointRole,
  type Reading,
  type Session,
  type TrimPositions,
} from '../../app/api';
import { BenchError, errorClass, storageReason } from '../../app/errors';
import { SettleDetector } from '../../app/nullfit/settle';
import { dutToRx } from '../../app/path';
import type { ReadingSink } from './sink';
import type { LevelSource } from '../sources/types';
import { Corrector } from './correct';

export interface LiveEvents {
  reading: [LiveReading];
  error: [BenchError];
  state: [];
  /** The loop stopped by itself: a fault retrying cannot heal (a refusal, a store that cannot write). */
  halt: [BenchError];
}

/**
 * A failed write to the store as the error the user sees: our own refusals stay as they are (a session that
 * ended), anything else (a full disk, an I/O error) is EIO with SQLite's reason.
 */
export function storeFault(e: unknown): BenchError {
  if (e instanceof BenchError) return e;
  const why = storageReason(String((e as { code?: string }).code ?? '')) ?? 'the database refused the write';
  return new BenchError(
    'EIO',
    `cannot store the reading: ${why} (${e instanceof Error ? e.message : String(e)}); reading stopped, ` +
      'every reading acknowledged before this one is stored',
    'database',
  );
}

export interface LiveOptions {
  /** Settled when the last `settleCount` readings lie within ± settleTolDb. */
  settleCount?: number;
  settleTolDb?: number;
  settleTimeoutMs?: number;
  /**
   * The settle window spans at least this long, ms; default 1200. An S-meter decays with a time constant of
   * 500 ms or more (IARU Region 1 recommendation R.1): a shorter window calls a meter still falling towards a
   * deep null steady while it reads dB high (see SettleDetector.minSpanMs).
   */
  settleSpanMs?: number;
  /** From the start of one reading to the start of the next, ms (on the source's clock); a slower answer starts the next at once. */
  intervalMs?: number;
  /** Where the trimmers stand when the bench starts (the last stored positions of the session). */
  initialTrims?: TrimPositions;
}

/** How long after turning a trimmer the bench waits before the first reading (a hand is still on it). */
const TRIM_DWELL_MS = 150;

export class LiveBench extends EventEmitter<LiveEvents> {
  readonly session: Session;
  readonly source: LevelSource;
  readonly corrector: Corrector;
  private readonly store: ReadingSink;
  private readonly settle: SettleDetector;
  private readonly opts: Required<Omit<LiveOptions, 'initialTrims'>>;
  private running = false;
  private loopDone: Promise<void> | null = null;
  private latest: LiveReading | null = null;
  private waiters: {
    settledOnly: boolean;
    after: number;
    resolve: (r: LiveReading) => void;
    reject: (e: Error) => void;
  }[] = [];
  private seq = 0;
  role: PointRole = 'carrier';
  trims: TrimPositions;
  lastError: string | null = null;

  constructor(store: ReadingSink, session: Session, source: LevelSource, opts: LiveOptions = {}) {
    super();
    this.store = store;
    this.session = session;
    this.source = source;
    this.opts = {
      settleCount: opts.settleCount ?? 8,
      settleTolDb: opts.settleTolDb ?? 1,
      settleTimeoutMs: opts.settleTimeoutMs ?? 8000,
      settleSpanMs: opts.settleSpanMs ?? 1200,
      intervalMs: opts.intervalMs ?? 0,
    };
    this.corrector = new Corrector({
      calibration: session.receiver.calibration,
      path: session.path,
      noiseFloorDbm: source.noiseFloorDbm,
      // The meter's own step, where the source declares it (an S-unit meter: 6 dB), in every reading's uncertainty.
      stepDb: source.meterStepDb,
      // Within 10 dB of the rated maximum the front end is likely compressing (common practice).
      overloadDbm: session.receiver.maxInputDbm - 10,
    });
    this.settle = new SettleDetector({
      windowCount: this.opts.settleCount,
      toleranceDb: this.opts.settleTolDb,
      timeoutMs: this.opts.settleTimeoutMs,
      minSpanMs: this.opts.settleSpanMs,
    });
    // Continue where the session left off; a new session starts each trimmer mid-travel.
    const last = opts.initialTrims ?? {};
    this.trims = Object.fromEntries(
      session.trims.map((t) => [t.key, typeof last[t.key] === 'number' ? last[t.key] : (t.min + t.max) / 2]),
    );
  }

  get isRunning(): boolean {
    return this.running;
  }

  get latestReading(): LiveReading | null {
    return this.latest;
  }

  async start(): Promise<void> {
    if (this.running) return;
    await this.source.open();
    await this.source.setFrequency(roleFrequencyHz(this.role, this.session.carrierHz, this.session.toneHz));
    if (this.source.caps.trims && this.source.setTrims) await this.source.setTrims(this.trims);
    this.running = true;
    this.settle.reset();
    this.loopDone = this.loop();
  }

  async stop(): Promise<void> {
    this.running = false;
    // Closing the source first ends a read that is waiting on a slow or broken link.
    const closed = this.source.close();
    await this.loopDone;
    this.loopDone = null;
    for (const w of this.waiters.splice(0))
      w.reject(new BenchError('ECONFLICT', 'the live bench was stopped'));
    await closed;
  }

  async tune(role: PointRole): Promise<void> {
    const hz = roleFrequencyHz(role, this.session.carrierHz, this.session.toneHz);
    // Safety: a point whose expected level would overdrive the receiver is still only read, never transmitted by us;
    // the session-level check (createSession) already refused a set-up above the rated maximum.
    await this.source.setFrequency(hz);
    if (this.source.caps.unbalance && this.source.setUnbalanced)
      await this.source.setUnbalanced(role === 'reference');
    this.role = role;
    this.settle.reset();
    this.seq++;
    this.emit('state');
  }

  async setTrims(trims: TrimPositions): Promise<void> {
    const known = new Map(this.session.trims.map((t) => [t.key, t]));
    for (const [k, v] of Object.entries(trims)) {
      const def = known.get(k);
      if (!def)
        throw new BenchError(
          'EINVAL',
          `no trimmer "${k}" in this session (have ${[...known.keys()].join(', ')})`,
          `trims.${k}`,
        );
      if (v < def.min || v > def.max)
        throw new BenchError(
          'EINVAL',
          `${def.label} must be between ${def.min} and ${def.max} ${def.unit}, got ${v}`,
          `trims.${k}`,
        );
    }
    this.trims = { ...this.trims, ...trims };
    if (this.source.caps.trims && this.source.setTrims) await this.source.setTrims(this.trims);
    this.settle.reset();
    this.seq++;
    this.emit('state');
  }

  /** Resolves with the next reading taken after now (settled, if asked) — or rejects on timeout. */
  nextReading(settledOnly: boolean, timeoutMs = this.opts.settleTimeoutMs + 2000): Promise<LiveReading> {
    if (!this.running)
      return Promise.reject(
        new BenchError('ECONFLICT', 'the live bench is not running; open a session first'),
      );
    return new Promise((resolve, reject) => {
      const w = { settledOnly, after: this.seq, resolve, reject };
      this.waiters.push(w);
      if (timeoutMs <= 0) return;
      const timer = setTimeout(() => {
        const i = this.waiters.indexOf(w);
        if (i >= 0) {
          this.waiters.splice(i, 1);
          reject(
            new BenchError('ETIMEOUT', `no ${settledOnly ? 'settled ' : ''}reading within ${timeoutMs} ms`),
          );
        }
      }, timeoutMs);
      timer.unref?.();
    });
  }

  /** Keeps the latest reading as a point of the session, with the current trimmer positions. */
  keep(note = ''): Reading {
    const r = this.latest;
    if (!r) throw new BenchError('ECONFLICT', 'no reading yet: wait for the level display, then keep');
    return this.store.addReading({
      sessionId: this.session.id,
      t: r.t,
      freqHz: r.freqHz,
      role: r.role,
      raw: r.raw,
      dbmRx: r.dbmRx,
      dbmDut: r.dbmDut,
      uDb: r.uDb,
      settled: r.settled,
      kept: true,
      floorLimited: r.floorLimited,
      overload: r.overload,
      trims: r.trims,
      calibration: this.corrector.calibration,
      path: this.corrector.path,
      note,
    });
  }

  private async loop(): Promise<void> {
    let gapId: number | null = null;
    while (this.running) {
      const started = this.source.now();
      try {
        const s = await this.source.read();
        if (!this.running) break;
        if (gapId !== null) {
          const closed = this.storeOrHalt(() => this.store.closeGap(gapId!, s.t));
          if (closed === null) break;
          gapId = null;
        }
        const c = this.corrector.correct(s);
        const st = this.settle.push(c.dbmRx, s.t);
        const stored = this.storeOrHalt(() =>
          this.store.addReading({
            sessionId: this.session.id,
            t: s.t,
            freqHz: s.freqHz,
            role: this.role,
            raw: s.raw,
            ...c,
            settled: st.settled,
            kept: false,
            trims: this.trims,
            calibration: this.corrector.calibration,
            path: this.corrector.path,
          }),
        );
        if (stored === null) break;
        const live: LiveReading = {
          id: stored.id,
          sessionId: this.session.id,
          t: s.t,
          freqHz: s.freqHz,
          role: this.role,
          raw: s.raw,
          ...c,
          settled: st.settled,
          trims: { ...this.trims },
          spreadDb: st.spreadDb,
        };
        this.latest = live;
        this.lastError = null;
        this.emit('reading', live);
        const seqNow = this.seq;
        this.waiters = this.waiters.filter((w) => {
          if (w.after !== seqNow || (w.settledOnly && !(st.settled || st.timedOut))) return true;
          w.resolve(live);
          return false;
        });
        // Start to start: the receiver's answer time is part of the interval, not added to it (a level change
        // then waits at most one interval for the next question).
        const rest = this.opts.intervalMs - (this.source.now() - started);
        if (rest > 0) await this.source.sleep(rest);
        // A source on a virtual clock answers at once: let timers and I/O run between readings.
        await new Promise((r) => setImmediate(r));
      } catch (e) {
        if (!this.running) break;
        const err =
          e instanceof BenchError ? e : new BenchError('EIO', e instanceof Error ? e.message : String(e));
        this.lastError = err.message;
        if (gapId === null) {
          const g = this.storeOrHalt(() =>
            this.store.addGap(this.session.id, this.source.now(), err.code, err.message),
          );
          if (g === null) break;
          gapId = g;
        }
        if (errorClass(err.code) === 'permanent') {
          // A configuration fault or a refusal does not heal by retrying: stop and say so.
          this.halt(err);
          break;
        }
        this.emit('error', err);
        await this.source.sleep(500);
        // On a virtual clock the sleep above returns at once: the retry still yields to timers and I/O,
        // so a failing link never starves the rest of the program.
        await new Promise((r) => setTimeout(r, 20));
      }
    }
  }

  /** Runs a store write; on failure the loop halts with the fault said once, and null is returned. */
  private storeOrHalt<T>(write: () => T): T | null {
    try {
      return write();
    } catch (e) {
      this.halt(storeFault(e));
      return null;
    }
  }

  /** Stops the loop by itself, saying why: the error is the last one, and 'halt' tells the owner. */
  private halt(err: BenchError): void {
    this.running = false;
    this.lastError = err.message;
    this.emit('error', err);
    this.emit('halt', err);
    this.emit('state');
  }

  /** The receiver input at the session's PEP, for display. */
  rxPepDbm(): number {
    return dutToRx(this.session.txPepDbm, this.corrector.path);
  }

  /** Waits on the source's clock; trimming takes a moment at a real bench too. */
  dwell(): Promise<void> {
    return this.source.sleep(TRIM_DWELL_MS);
  }
}
