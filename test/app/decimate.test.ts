import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import fc from 'fast-check';
import { bucketsToLine, decimateForChart, minMaxBuckets } from '../../app/decimate';
import '../helpers/fuzz'; // FUZZ_SEED replays a run

describe('decimate.minMaxBuckets()', () => {
  it('keeps a one-reading null among ten thousand readings', () => {
    const points = Array.from({ length: 10_000 }, (_, i) => ({ t: i * 40, y: -50 + Math.sin(i / 300) }));
    points[6123].y = -92;
    const b = minMaxBuckets(points, 0, 9_999 * 40, 200);
    assert.ok(b.length <= 200);
    assert.equal(Math.min(...b.map((x) => x.min)), -92);
    const hit = b.find((x) => x.min === -92)!;
    assert.equal(hit.tMin, 6123 * 40);
    assert.equal(
      b.reduce((n, x) => n + x.n, 0),
      10_000,
    );
  });

  it('agrees with a brute-force min and max over every bucket (property)', () => {
    fc.assert(
      fc.property(
        fc.array(
          fc.record({
            t: fc.integer({ min: 0, max: 1000 }),
            y: fc.double({ min: -150, max: 30, noNaN: true }),
          }),
          {
            minLength: 1,
            maxLength: 300,
          },
        ),
        fc.integer({ min: 1, max: 50 }),
        (raw, buckets) => {
          const pts = [...raw].sort((a, b) => a.t - b.t);
          const from = pts[0].t;
          const to = pts[pts.length - 1].t;
          const got = minMaxBuckets(pts, from, to, buckets);
          const width = (to - from) / buckets || 1;
          for (const b of got) {
            const inside = pts.filter(
              (p) =>
                Math.min(buckets - 1, Math.floor((p.t - from) / width)) === Math.round((b.t0 - from) / width),
            );
            assert.equal(b.n, inside.length);
            assert.equal(b.min, Math.min(...inside.map((p) => p.y)));
            assert.equal(b.max, Math.max(...inside.map((p) => p.y)));
          }
          // The overall extremes always survive.
          assert.equal(Math.min(...got.map((b) => b.min)), Math.min(...pts.map((p) => p.y)));
          assert.equal(Math.max(...got.map((b) => b.max)), Math.max(...pts.map((p) => p.y)));
        },
      ),
    );
  });

  it('leaves empty spans out (a gap stays a gap) and counts floor-limited readings', () => {
    const b = minMaxBuckets(
      [
        { t: 0, y: -60 },
        { t: 1, y: -100, floorLimited: true },
        { t: 99, y: -61 },
      ],
      0,
      100,
      10,
    );
    assert.deepEqual(
      b.map((x) => [x.n, x.floor]),
      [
        [2, 1],
        [1, 0],
      ],
    );
  });

  it('refuses a bucket count out of range and a span that runs backwards, naming them', () => {
    assert.throws(() => minMaxBuckets([], 0, 1, 0), /buckets: must be a whole number/);
    assert.throws(() => minMaxBuckets([], 5, 1, 10), /toT: needs a finite span/);
  });
});

describe('decimate.bucketsToLine() and decimateForChart()', () => {
  it('draws each bucket down to its min and up to its max in the order they were read', () => {
    const line = bucketsToLine([
      { t0: 0, t1: 10, n: 3, min: -90, max: -50, tMin: 7, tMax: 2, floor: 0 },
      { t0: 10, t1: 20, n: 1, min: -55, max: -55, tMin: 12, tMax: 12, floor: 0 },
    ]);
    assert.deepEqual(line, [
      { t: 2, y: -50 },
      { t: 7, y: -90 },
      { t: 12, y: -55 },
    ]);
  });

  it('returns short records unchanged and bounds long ones to two points per bucket', () => {
    const short = [
      { t: 0, y: 1 },
      { t: 1, y: 2 },
    ];
    assert.deepEqual(decimateForChart(short, 10), short);
    const long = Array.from({ length: 3000 }, (_, i) => ({ t: i, y: i % 7 === 0 ? -90 : -50 }));
    const d = decimateForChart(long, 400);
    assert.ok(d.length <= 800);
    assert.equal(Math.min(...d.map((p) => p.y)), -90);
  });
});
