// Settle detection before a reading is kept: a rolling window within a tolerance, or a flagged timeout.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { SettleDetector } from '../../app/nullfit/settle';
import { BenchError } from '../../app/errors';

describe('SettleDetector', () => {
  it('is not settled until the window is full, then settled when every reading is within the tolerance', () => {
    const d = new SettleDetector({ windowCount: 3, toleranceDb: 0.5, timeoutMs: 5000 });
    assert.equal(d.push(-60.0, 0).settled, false);
    assert.equal(d.push(-60.2, 100).settled, false);
    const s = d.push(-59.9, 200);
    assert.equal(s.settled, true);
    assert.equal(s.timedOut, false);
    assert.equal(s.count, 3);
    assert.ok(Math.abs(s.spreadDb - 0.3) < 1e-9, `spread ${s.spreadDb}`);
    // Power mean of −60.0, −60.2, −59.9 dBm (computed: 10·log10 of the mean of 10^(x/10)) = −60.0315 dBm.
    assert.ok(Math.abs(s.meanDbm - -60.0315) < 1e-4, `mean ${s.meanDbm}`);
  });

  it('waits while the level is still moving after a trimmer turn, and settles once it stops', () => {
    const d = new SettleDetector({ windowCount: 4, toleranceDb: 0.25, timeoutMs: 10_000 });
    // An exponential approach to −72 dBm, as a meter's averaging would show it.
    const states = Array.from({ length: 20 }, (_, k) => d.push(-72 + 15 * Math.exp(-k / 2), k * 200));
    const first = states.findIndex((s) => s.settled);
    assert.ok(first >= 8 && first <= 14, `settled at reading ${first}`);
    assert.ok(states.slice(0, first).every((s) => !s.settled && !s.timedOut));
    assert.ok(Math.abs(states[first].meanDbm - -72) < 0.5, `settled at ${states[first].meanDbm} dBm`);
  });

  it('is not fooled by a slow decay that stays inside the tolerance band: the drift test holds it back', () => {
    // A meter decaying 0.3 dB per reading towards a deep null: every window of 8 readings spans 2.1 dB,
    // inside ±1.3 dB of its (power) mean, yet the level is still falling.
    const d = new SettleDetector({ windowCount: 8, toleranceDb: 1.3, timeoutMs: 60_000 });
    const states = Array.from({ length: 30 }, (_, k) => d.push(-60 - 0.3 * k, k * 40));
    assert.ok(
      states.every((s) => !s.settled),
      'never settled while drifting',
    );
    const loose = new SettleDetector({ windowCount: 8, toleranceDb: 1.3, timeoutMs: 60_000, trendDb: 5 });
    const last = Array.from({ length: 30 }, (_, k) => loose.push(-60 - 0.3 * k, k * 40)).pop();
    assert.equal(last?.settled, true, 'without the drift test the same readings pass');
  });

  it('with minSpanMs, does not call a slowly decaying meter steady while it still reads high', () => {
    // An S-meter falling 30 dB towards a deep null with a 500 ms decay time constant (the least IARU
    // Region 1 recommendation R.1 allows), read every 40 ms in 1 dB steps, as the simulated receiver does.
    const meter = (tMs: number): number => Math.round(-100 + 30 * Math.exp(-tMs / 500));
    const settleAt = (d: SettleDetector): { t: number; mean: number } => {
      for (let t = 40; t < 8000; t += 40) {
        const s = d.push(meter(t), t);
        if (s.settled) return { t, mean: s.meanDbm };
      }
      return { t: Infinity, mean: NaN };
    };
    const short = settleAt(new SettleDetector({ windowCount: 8, toleranceDb: 1, timeoutMs: 8000 }));
    const long = settleAt(
      new SettleDetector({ windowCount: 8, toleranceDb: 1, timeoutMs: 8000, minSpanMs: 1200 }),
    );
    // A window of 8 readings (280 ms) passes the drift test with dB still to fall.
    assert.ok(short.mean - -100 >= 1, `short window settled ${(short.mean + 100).toFixed(2)} dB high`);
    // Spanning 1.2 s, the drift between the window's halves bounds what is left to a fraction of a dB.
    assert.ok(long.mean - -100 <= 0.6, `long window settled ${(long.mean + 100).toFixed(2)} dB high`);
    assert.ok(long.t >= 1200 && long.t < 4000, `settled after ${long.t} ms`);
    assert.match(
      String(new SettleDetector({ windowCount: 8, toleranceDb: 1, timeoutMs: 8000, minSpanMs: 1200 })),
      /8 readings over at least 1200 ms within ±1 dB/,
    );
  });

  it('flags a timeout when the level never settles, and keeps reporting the window', () => {
    const d = new SettleDetector({ windowCount: 3, toleranceDb: 0.1, timeoutMs: 1000 });
    let s = d.push(-50, 0);
    for (let t = 100; t <= 900; t += 100) s = d.push(t % 200 === 0 ? -50 : -51, t);
    assert.equal(s.timedOut, false, 'not yet at 900 ms');
    s = d.push(-50, 1000);
    assert.equal(s.settled, false);
    assert.equal(s.timedOut, true);
    assert.ok(Math.abs(s.spreadDb - 1) < 1e-9, `spread ${s.spreadDb}`);
  });

  it('starts a new wait after reset()', () => {
    const d = new SettleDetector({ windowCount: 2, toleranceDb: 1, timeoutMs: 500 });
    d.push(-40, 0);
    assert.equal(d.push(-40.5, 600).timedOut, false, 'settled, so not timed out');
    d.reset();
    const s = d.push(-70, 50);
    assert.equal(s.count, 1);
    assert.equal(s.settled, false);
    assert.equal(s.timedOut, false, 'the clock restarts at the first reading after reset');
  });

  it('refuses bad settings, a non-finite level and time going backwards, naming them', () => {
    const bad = (o: object, field: string): void =>
      assert.throws(
        () => new SettleDetector(o as never),
        (e: unknown) => e instanceof BenchError && e.code === 'EINVAL' && e.field === field,
        field,
      );
    bad({ windowCount: 1, toleranceDb: 1, timeoutMs: 1 }, 'SettleDetector.windowCount');
    bad({ windowCount: 2.5, toleranceDb: 1, timeoutMs: 1 }, 'SettleDetector.windowCount');
    bad({ windowCount: 3, toleranceDb: 0, timeoutMs: 1 }, 'SettleDetector.toleranceDb');
    bad({ windowCount: 3, toleranceDb: 1, timeoutMs: Number.NaN }, 'SettleDetector.timeoutMs');
    bad({ windowCount: 3, toleranceDb: 1, timeoutMs: 1, minSpanMs: -1 }, 'SettleDetector.minSpanMs');
    const d = new SettleDetector({ windowCount: 3, toleranceDb: 1, timeoutMs: 100 });
    assert.throws(
      () => d.push(Number.NaN, 0),
      (e: unknown) => e instanceof BenchError && e.field === 'SettleDetector.push(dbm)',
    );
    d.push(-50, 10);
    assert.throws(
      () => d.push(-50, 5),
      (e: unknown) => e instanceof BenchError && /went back in time/.test(e.message),
    );
    assert.match(String(d), /3 readings within ±1 dB, timeout 100 ms/);
  });
});
