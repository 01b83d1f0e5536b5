// Runs in Node. The front end every link-based source (network, serial) is used through: it serialises the
// driver's operations, tells soft errors from broken links, and reconnects with backoff, re-tuning afterwards.
// Callers see one error vocabulary: ETIMEOUT and EPROTO are soft (record a gap, go on); EIO means the link is
// down and the next operation tries to bring it back.
import { BenchError, errorClass } from '../../app/errors';
import type { LevelSource, RawSample } from './types';

export interface LinkOptions {
  /** Waits before reconnect attempt 1, 2, 3, ... ms; the last value repeats. */
  backoffMs?: readonly number[];
  /** Consecutive soft errors after which the link is treated as broken (a hung peer answers nothing). */
  softLimit?: number;
}

export const DEFAULT_BACKOFF_MS = [250, 500, 1000, 2000, 4000, 8000] as const;

export type LinkState = 'closed' | 'open' | 'down';

/** An error from a driver as BenchError; anything unexpected counts as a broken link. */
export function asBenchError(e: unknown): BenchError {
  if (e instanceof BenchError) return e;
  return new BenchError('EIO', e instanceof Error ? e.message : String(e));
}

export class LinkedSource implements LevelSource {
  readonly inner: LevelSource;
  private readonly backoff: readonly number[];
  private readonly softLimit: number;
  private chain: Promise<unknown> = Promise.resolve();
  private lastHz: number | null = null;
  private failures = 0;
  private nextAttemptAt = 0;
  private softRun = 0;
  private wake: (() => void) | null = null;
  private downReason = '';
  state: LinkState = 'closed';
  /** Successful reconnects since open (for status and tests). */
  reconnects = 0;

  constructor(inner: LevelSource, opts: LinkOptions = {}) {
    this.inner = inner;
    this.backoff = opts.backoffMs ?? DEFAULT_BACKOFF_MS;
    this.softLimit = opts.softLimit ?? 3;
  }

  get kind(): string {
    return this.inner.kind;
  }
  get spec(): string {
    return this.inner.spec;
  }
  get caps() {
    return this.inner.caps;
  }
  get noiseFloorDbm(): number | undefined {
    return this.inner.noiseFloorDbm;
  }
  get quantity() {
    return this.inner.quantity;
  }

  /** Runs one operation at a time: a reply must never be taken for another command's. */
  private lock<T>(fn: () => Promise<T>): Promise<T> {
    const run = this.chain.then(fn, fn);
    this.chain = run.catch(() => undefined);
    return run;
  }

  async open(): Promise<void> {
    await this.lock(async () => {
      await this.inner.open();
      this.state = 'open';
      this.failures = 0;
      this.softRun = 0;
    });
  }

  /** Closes at once, ending an exchange in flight (it fails with EIO), then waits for it to unwind. */
  async close(): Promise<void> {
    this.state = 'closed';
    this.wake?.();
    await this.inner.close().catch(() => undefined);
    await this.chain;
  }

  setFrequency(hz: number): Promise<void> {
    return this.lock(async () => {
      await this.ensureUp();
      try {
        await this.inner.setFrequency(hz);
        this.lastHz = hz;
        this.softRun = 0;
      } catch (e) {
        throw await this.failed(e);
      }
    });
  }

  read(): Promise<RawSample> {
    return this.lock(async () => {
      await this.ensureUp();
      try {
        const s = await this.inner.read();
        this.softRun = 0;
        return s;
      } catch (e) {
        throw await this.failed(e);
      }
    });
  }

  now(): number {
    return this.inner.now();
  }

  sleep(ms: number): Promise<void> {
    return this.inner.sleep(ms);
  }

  private async failed(e: unknown): Promise<BenchError> {
    const err = asBenchError(e);
    const kind = errorClass(err.code);
    if (kind === 'transient') {
      const run = ++this.softRun;
      if (run < this.softLimit) return err;
      await this.goDown(`${run} failed exchanges in a row (last: ${err.message})`);
      return new BenchError(
        'EIO',
        `${err.message}; ${run} failed exchanges in a row, reconnecting to ${this.spec}`,
      );
    }
    if (kind === 'link-down') {
      await this.goDown(err.message);
      return new BenchError('EIO', `${err.message}; reconnecting to ${this.spec}`);
    }
    return err;
  }

  private async goDown(reason: string): Promise<void> {
    this.state = 'down';
    this.downReason = reason;
    this.softRun = 0;
    this.nextAttemptAt = Date.now() + this.backoff[Math.min(this.failures, this.backoff.length - 1)];
    await this.inner.close().catch(() => undefined);
  }

  /** When the link is down: waits out the backoff, reconnects and re-tunes; or throws EIO for this attempt. */
  private async ensureUp(): Promise<void> {
    if (this.state === 'closed')
      throw new BenchError('ECONFLICT', `the link to ${this.spec} is not open`, 'source');
    if (this.state === 'open') return;
    const wait = this.nextAttemptAt - Date.now();
    if (wait > 0)
      await new Promise<void>((ok) => {
        const t = setTimeout(ok, wait);
        this.wake = () => {
          clearTimeout(t);
          ok();
        };
      });
    this.wake = null;
    if ((this.state as LinkState) === 'closed')
      throw new BenchError('ECONFLICT', `the link to ${this.spec} was closed`, 'source');
    try {
      await this.inner.open();
      if (this.lastHz !== null && this.caps.tune) await this.inner.setFrequency(this.lastHz);
      this.state = 'open';
      this.failures = 0;
      this.reconnects++;
    } catch (e) {
      const err = asBenchError(e);
      this.failures++;
      await this.inner.close().catch(() => undefined);
      const next = this.backoff[Math.min(this.failures, this.backoff.length - 1)];
      this.nextAttemptAt = Date.now() + next;
      throw new BenchError(
        'EIO',
        `link to ${this.spec} down (${this.downReason}); reconnect attempt ${this.failures} failed: ${err.message}; ` +
          `next attempt in ${(next / 1000).toFixed(1)} s`,
      );
    }
  }
}
