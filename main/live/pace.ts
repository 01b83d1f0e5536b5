// Runs in Node. A level source that asks its receiver at most `rateHz` times a second (wall clock), so a
// logger can run at a chosen rate whatever the receiver's own speed. Everything else passes straight through.
import { finiteIn } from '../../app/errors';
import type { LevelSource, RawSample } from '../sources/types';

/** Highest rate a logger may ask for, readings/s: beyond it every link we drive is the limit anyway. */
export const MAX_RATE_HZ = 1000;

/** The clock a paced source waits on: the wall clock unless a test passes its own. */
export interface PaceClock {
  now(): number;
  wait(ms: number): Promise<void>;
}

const WALL: PaceClock = {
  now: () => Date.now(),
  wait: (ms) => new Promise((r) => setTimeout(r, ms)),
};

/**
 * Wraps a source so successive read() calls start at least 1/rateHz seconds apart on the wall clock.
 * A slow receiver is not hurried and a stall is not made up with a burst afterwards.
 * @param rateHz readings per second, 0 < rateHz <= MAX_RATE_HZ
 * @param clock the clock to wait on (the wall clock by default)
 */
export function pacedSource(inner: LevelSource, rateHz: number, clock: PaceClock = WALL): LevelSource {
  finiteIn(rateHz, 'rateHz', Number.MIN_VALUE, MAX_RATE_HZ, 'readings/s');
  const periodMs = 1000 / rateHz;
  let next = 0;
  const paced: LevelSource = {
    kind: inner.kind,
    spec: inner.spec,
    caps: inner.caps,
    get noiseFloorDbm() {
      return inner.noiseFloorDbm;
    },
    get quantity() {
      return inner.quantity;
    },
    open: () => inner.open(),
    close: () => inner.close(),
    setFrequency: (hz) => inner.setFrequency(hz),
    async read(): Promise<RawSample> {
      const wait = next - clock.now();
      if (wait > 0) await clock.wait(wait);
      next = Math.max(next, clock.now()) + periodMs;
      return inner.read();
    },
    now: () => inner.now(),
    sleep: (ms) => inner.sleep(ms),
  };
  if (inner.setTrims) paced.setTrims = (t) => inner.setTrims!(t);
  if (inner.setUnbalanced) paced.setUnbalanced = (on) => inner.setUnbalanced!(on);
  return paced;
}
