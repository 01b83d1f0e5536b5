// Guided alignment: the next trial setting, on synthetic benches (invented for the test) that answer
// each trial with the model plus noise, the way a user at the bench would follow the suggestions.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { nextTrial1D } from '../../app/nullfit/guide1d';
import { nextTrial2D } from '../../app/nullfit/guide2d';
import type { Reading1D } from '../../app/nullfit/fit1d';
import type { Reading2D } from '../../app/nullfit/fit2d';
import { BenchError } from '../../app/errors';
import { polar, reading1D, reading2D, rng, type Bench1D, type Bench2D } from './nullfit-helpers';

const median = (xs: number[]): number => xs.slice().sort((a, b) => a - b)[Math.floor(xs.length / 2)];

/** Follow the guide on a bench until it says stop; count readings until one is within 1 dB of the deepest. */
function run1D(
  bench: Bench1D,
  seed: number,
  maxReadings = 30,
): { toNull: number; toStop: number; readings: Reading1D[] } {
  const g = rng(seed);
  const readings: Reading1D[] = [];
  const deepest = reading1D(bench, bench.x0);
  let toNull = Infinity;
  for (let k = 0; k < maxReadings; k++) {
    const t = nextTrial1D(readings, [0, 10], {
      floorDbm: bench.floorDbm ?? undefined,
      uDb: 0.3,
      resolution: 0.0005,
    });
    if (t.stop) return { toNull, toStop: k, readings };
    readings.push({ position: t.position, dbm: reading1D(bench, t.position) + 0.2 * g.gauss() });
    if (toNull === Infinity && reading1D(bench, t.position) < deepest + 1) toNull = k + 1;
  }
  return { toNull, toStop: Infinity, readings };
}

function randomBench1D(seed: number): Bench1D {
  const g = rng(seed);
  // Ends of a 10-turn trimmer at about −20 dBm, leakage −85 to −65 dBm, receiver floor −95 dBm.
  return {
    a: Math.sqrt((1e-2 / 25) * (0.3 + g.uniform())),
    x0: 1 + 8 * g.uniform(),
    cDbm: -85 + 20 * g.uniform(),
    floorDbm: -95,
  };
}

describe('nextTrial1D()', () => {
  it('surveys across the travel before a fit is possible, never twice at the same place', () => {
    const t0 = nextTrial1D([], [0, 10]);
    assert.equal(t0.mode, 'survey');
    assert.equal(t0.position, 5);
    assert.equal(t0.predictedDbm, null);
    assert.equal(t0.stop, false);
    const t1 = nextTrial1D([{ position: 5, dbm: -40 }], [0, 10]);
    const t2 = nextTrial1D(
      [
        { position: 5, dbm: -40 },
        { position: t1.position, dbm: -30 },
      ],
      [0, 10],
    );
    assert.notEqual(t1.position, 5);
    assert.ok(![5, t1.position].includes(t2.position), `third survey point ${t2.position}`);
    assert.match(t2.reason, /^survey /);
  });

  it('reaches within 1 dB of the deepest null in few readings, and stops soon after (20 benches)', () => {
    const runs = Array.from({ length: 20 }, (_, i) => run1D(randomBench1D(1000 + i), 1000 + i));
    const toNull = runs.map((r) => r.toNull);
    const toStop = runs.map((r) => r.toStop);
    assert.ok(median(toNull) <= 8, `median ${median(toNull)} readings to the null: ${toNull.join(' ')}`);
    assert.ok(Math.max(...toNull) <= 12, `worst ${Math.max(...toNull)}: ${toNull.join(' ')}`);
    assert.ok(Math.max(...toStop) <= 15, `stopped after ${toStop.join(' ')} readings`);
  });

  it('when it stops, the suggested position is the null and the best reading is within the stated uncertainty of it', () => {
    const bench = randomBench1D(7);
    const { readings } = run1D(bench, 7);
    const t = nextTrial1D(readings, [0, 10], { floorDbm: -95, uDb: 0.3, resolution: 0.0005 });
    assert.equal(t.stop, true);
    assert.equal(t.mode, 'done');
    assert.ok(
      reading1D(bench, t.position) < reading1D(bench, bench.x0) + 1,
      `stopped at ${t.position}, null at ${bench.x0}`,
    );
    assert.ok(t.expectedGainDb! < 0.3, `expected gain ${t.expectedGainDb}`);
    assert.match(
      t.reason,
      /^stop: the best reading \(−\d+\.\d dBm\) is within 0\.3 dB of the predicted null/,
    );
    const [lo, hi] = t.band!;
    assert.ok(lo < t.predictedDbm! && t.predictedDbm! < hi, 'prediction inside its band');
  });

  it('on a meter read in S-units, brackets where the reading steps up on each side and sets the middle (20 benches)', () => {
    // The meter shows the S-unit reached (6 dB steps, IARU Region 1 R.1): readings carry no depth, only which
    // side of a step the level lies. The null is symmetric in the trimmer's travel (fit1d's model), so the
    // middle of the two step-up points is the null.
    const sUnit = (dbm: number) => Math.floor((dbm + 73) / 6) * 6 - 73;
    const toNull: number[] = [];
    for (let i = 0; i < 20; i++) {
      const bench = randomBench1D(2000 + i);
      const deepest = reading1D(bench, bench.x0);
      const readings: Reading1D[] = [];
      let reached = Infinity;
      let stopped: { position: number } | null = null;
      for (let k = 0; k < 60 && !stopped; k++) {
        const t = nextTrial1D(readings, [0, 10], { uDb: 1.73, resolution: 0.0005, meterStepDb: 6 });
        assert.ok(
          !readings.some((r) => Math.abs(r.position - t.position) < 0.00025) || t.mode !== 'probe',
          `probed ${t.position} twice`,
        );
        if (t.stop) stopped = t;
        else readings.push({ position: t.position, dbm: sUnit(reading1D(bench, t.position)) });
        if (reached === Infinity && reading1D(bench, t.position) < deepest + 1) reached = k + 1;
      }
      assert.ok(stopped, `bench ${i}: no stop in 60 readings`);
      assert.ok(
        reading1D(bench, stopped.position) < deepest + 1,
        `bench ${i}: stopped at ${stopped.position}, null at ${bench.x0}`,
      );
      toNull.push(reached);
    }
    // Noise-free steps: the same count every run (23 at the median with this 0.0005-turn resolution).
    assert.ok(median(toNull) <= 25, `median ${median(toNull)} readings to the null: ${toNull.join(' ')}`);
  });

  it('finds the end stop when the null lies beyond the travel', () => {
    // Balance would need −1.5 turns: the best the trimmer can do is its end at 0.
    const bench: Bench1D = { a: 0.02, x0: -1.5, cDbm: -80, floorDbm: -95 };
    const g = rng(3);
    const readings: Reading1D[] = [];
    let t = nextTrial1D(readings, [0, 10], { floorDbm: -95 });
    for (let k = 0; k < 15 && !t.stop; k++) {
      readings.push({ position: t.position, dbm: reading1D(bench, t.position) + 0.2 * g.gauss() });
      t = nextTrial1D(readings, [0, 10], { floorDbm: -95 });
    }
    assert.equal(t.stop, true, `did not stop: ${t.reason}`);
    assert.equal(t.position, 0);
    assert.match(t.reason, /beyond the end of travel/);
  });

  it('stops when the trimmer does not move the level at all, or every reading sits on the floor', () => {
    for (const [level, floorDbm] of [
      [-40, undefined],
      [-95.2, -95],
    ] as const) {
      const g = rng(9);
      const readings: Reading1D[] = [];
      let t = nextTrial1D(readings, [0, 10], { floorDbm });
      for (let k = 0; k < 20 && !t.stop; k++) {
        readings.push({ position: t.position, dbm: level + 0.05 * g.gauss() });
        t = nextTrial1D(readings, [0, 10], { floorDbm });
      }
      assert.equal(t.stop, true, `${level} dBm: did not stop after ${readings.length} readings: ${t.reason}`);
      assert.ok(readings.length <= 12, `${level} dBm: took ${readings.length} readings`);
      assert.match(t.reason, /does not move the carrier \(or the carrier is below the receiver's floor\)/);
    }
  });

  it('refuses bad bounds and bad readings, naming them', () => {
    assert.throws(
      () => nextTrial1D([], [10, 0]),
      (e: unknown) => e instanceof BenchError && e.field === 'bounds',
    );
    assert.throws(
      () => nextTrial1D([{ position: Number.NaN, dbm: -40 }], [0, 10]),
      (e: unknown) => e instanceof BenchError && e.field === 'readings[0].position',
    );
  });
});

function randomBench2D(seed: number, apart: [number, number] = [20, 160]): Bench2D {
  const g = rng(seed);
  // A in turns (0–10), B in degrees (0–300); directions apart[0]–apart[1]° apart.
  return {
    a0: 1 + 8 * g.uniform(),
    b0: 30 + 240 * g.uniform(),
    gA: polar(0.02 * (0.5 + g.uniform()), 0),
    gB: polar(0.0006 * (0.5 + g.uniform()), apart[0] + (apart[1] - apart[0]) * g.uniform()),
    cDbm: -85 + 20 * g.uniform(),
    floorDbm: -95,
  };
}

describe('nextTrial2D() on a meter read in S-units', () => {
  it('brackets the trimmers in turn until a pass ends where the trimmer stood, within 1 dB of the null (10 benches)', () => {
    // 6 dB steps (IARU Region 1 R.1). Directions 60–120° apart: passes in turn converge by about cos² of the
    // angle per round, so nearly parallel trimmers take many more (the benchmark's boards span 55–90°).
    const sUnit = (dbm: number) => Math.floor((dbm + 73) / 6) * 6 - 73;
    const counts: number[] = [];
    for (let i = 0; i < 10; i++) {
      const bench = randomBench2D(3000 + i, [60, 120]);
      const readings: Reading2D[] = [];
      let stop: { a: number; b: number } | null = null;
      for (let k = 0; k < 400 && !stop; k++) {
        const t = nextTrial2D(
          readings,
          { a: [0, 10], b: [0, 300] },
          { uDb: 1.73, resolution: { a: 0.0005, b: 0.05 }, meterStepDb: 6 },
        );
        if (t.stop) stop = t;
        else readings.push({ a: t.a, b: t.b, dbm: sUnit(reading2D(bench, t.a, t.b)) });
      }
      assert.ok(stop, `bench ${i}: no stop in 400 readings`);
      const deepest = reading2D(bench, bench.a0, bench.b0);
      assert.ok(
        reading2D(bench, stop.a, stop.b) < deepest + 1,
        `bench ${i}: stopped at ${stop.a}, ${stop.b} (${reading2D(bench, stop.a, stop.b) - deepest} dB above the null)`,
      );
      counts.push(readings.length);
    }
    assert.ok(Math.max(...counts) < 400, counts.join(' '));
  });
});

function run2D(bench: Bench2D, seed: number, maxReadings = 40): { toNull: number; toStop: number } {
  const g = rng(seed);
  const readings: Reading2D[] = [];
  const deepest = reading2D(bench, bench.a0, bench.b0);
  let toNull = Infinity;
  for (let k = 0; k < maxReadings; k++) {
    const t = nextTrial2D(
      readings,
      { a: [0, 10], b: [0, 300] },
      { floorDbm: -95, uDb: 0.3, resolution: { a: 0.0005, b: 0.01 } },
    );
    if (t.stop) return { toNull, toStop: k };
    readings.push({ a: t.a, b: t.b, dbm: reading2D(bench, t.a, t.b) + 0.2 * g.gauss() });
    if (toNull === Infinity && reading2D(bench, t.a, t.b) < deepest + 1) toNull = k + 1;
  }
  return { toNull, toStop: Infinity };
}

describe('nextTrial2D()', () => {
  it('surveys a pattern over both trimmers before a fit is possible', () => {
    const seen = new Set<string>();
    const readings: Reading2D[] = [];
    for (let k = 0; k < 6; k++) {
      const t = nextTrial2D(readings, { a: [0, 10], b: [0, 300] });
      assert.equal(t.mode, 'survey');
      seen.add(`${t.a},${t.b}`);
      readings.push({ a: t.a, b: t.b, dbm: -30 - k });
    }
    assert.equal(seen.size, 6, 'six different settings');
    assert.ok(
      new Set(readings.map((r) => r.a)).size >= 3 && new Set(readings.map((r) => r.b)).size >= 3,
      'both trimmers moved',
    );
  });

  it('reaches within 1 dB of the deepest null in few readings with directions not at right angles (12 benches)', () => {
    const runs = Array.from({ length: 12 }, (_, i) => run2D(randomBench2D(2000 + i), 2000 + i));
    const toNull = runs.map((r) => r.toNull);
    assert.ok(median(toNull) <= 15, `median ${median(toNull)} readings to the null: ${toNull.join(' ')}`);
    assert.ok(Math.max(...toNull) <= 22, `worst: ${toNull.join(' ')}`);
    assert.ok(
      runs.every((r) => Number.isFinite(r.toStop)),
      `stops: ${runs.map((r) => r.toStop).join(' ')}`,
    );
  });

  it('finds the valley of a collinear pair, and stops on it (6 benches)', () => {
    const runs = Array.from({ length: 6 }, (_, i) => {
      const b = randomBench2D(3000 + i);
      return run2D({ ...b, gB: polar(Math.hypot(...b.gB), 0) }, 3000 + i);
    });
    const toNull = runs.map((r) => r.toNull);
    const toStop = runs.map((r) => r.toStop);
    assert.ok(Math.max(...toNull) <= 16, `readings to the valley: ${toNull.join(' ')}`);
    assert.ok(Math.max(...toStop) <= 25, `stopped after ${toStop.join(' ')}`);
  });

  it('stops after the survey when neither trimmer moves the level', () => {
    const g = rng(4);
    const readings: Reading2D[] = [];
    let t = nextTrial2D(readings, { a: [0, 10], b: [0, 300] });
    for (let k = 0; k < 20 && !t.stop; k++) {
      readings.push({ a: t.a, b: t.b, dbm: -52 + 0.05 * g.gauss() });
      t = nextTrial2D(readings, { a: [0, 10], b: [0, 300] });
    }
    assert.equal(t.stop, true, t.reason);
    assert.equal(readings.length, 6);
    assert.match(t.reason, /the trimmers do not move the carrier/);
  });

  it('refuses bad bounds', () => {
    assert.throws(
      () => nextTrial2D([], { a: [0, 10], b: [5, 5] }),
      (e: unknown) => e instanceof BenchError && e.field === 'bounds.b',
    );
  });
});
