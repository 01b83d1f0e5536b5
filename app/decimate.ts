// Runs anywhere (app/ is runtime-free). Decimation of a long level record for a chart: the time span is cut
// into equal buckets and each keeps its lowest and highest level, so a carrier null (a dip lasting one reading)
// or a spike survives however many readings share a pixel. Averaging would fill a null in; taking every n-th
// reading would miss it.
import { check } from './errors';

/** One bucket of a decimated series. Times in ms (the readings' own clock), levels in dBm. */
export interface SeriesBucket {
  /** Start and end of the bucket's span (end exclusive, except for the last bucket). */
  t0: number;
  t1: number;
  /** Readings in the bucket. */
  n: number;
  /** Lowest and highest level, and when each was read. */
  min: number;
  max: number;
  tMin: number;
  tMax: number;
  /** Readings that sat at the receiver's floor (their level is an upper bound). */
  floor: number;
}

/** A session's levels decimated for a chart (the service's "series" call). */
export interface Series {
  sessionId: string;
  /** The span, ms on the readings' clock, and each bucket's width. */
  fromT: number;
  toT: number;
  bucketMs: number;
  /** Readings in the span. */
  total: number;
  buckets: SeriesBucket[];
}

export interface SeriesPoint {
  t: number;
  y: number;
  floorLimited?: boolean;
}

/**
 * Cuts [fromT, toT] into `buckets` equal spans and keeps each span's min and max. Empty spans are left out
 * (a gap in the record stays a gap on the chart).
 * @param buckets 1..100000; about the chart's width in pixels is right
 */
export function minMaxBuckets(
  points: readonly SeriesPoint[],
  fromT: number,
  toT: number,
  buckets: number,
): SeriesBucket[] {
  check(
    Number.isInteger(buckets) && buckets >= 1 && buckets <= 100_000,
    'buckets',
    `must be a whole number 1..100000, got ${buckets}`,
  );
  check(
    Number.isFinite(fromT) && Number.isFinite(toT) && toT >= fromT,
    'toT',
    `needs a finite span with toT >= fromT, got ${fromT}..${toT}`,
  );
  const width = (toT - fromT) / buckets || 1;
  const out = new Map<number, SeriesBucket>();
  for (const p of points) {
    if (!(p.t >= fromT && p.t <= toT) || !Number.isFinite(p.y)) continue;
    const i = Math.min(buckets - 1, Math.floor((p.t - fromT) / width));
    let b = out.get(i);
    if (!b) {
      b = {
        t0: fromT + i * width,
        t1: fromT + (i + 1) * width,
        n: 0,
        min: p.y,
        max: p.y,
        tMin: p.t,
        tMax: p.t,
        floor: 0,
      };
      out.set(i, b);
    }
    b.n++;
    if (p.y < b.min) {
      b.min = p.y;
      b.tMin = p.t;
    }
    if (p.y > b.max) {
      b.max = p.y;
      b.tMax = p.t;
    }
    if (p.floorLimited) b.floor++;
  }
  return [...out.entries()].sort((a, b) => a[0] - b[0]).map(([, b]) => b);
}

/**
 * A line through the buckets for drawing: each bucket's min and max in the order they were read, so the
 * trace goes down into every null and up to every peak. At most 2 points per bucket.
 */
export function bucketsToLine(buckets: readonly SeriesBucket[]): { t: number; y: number }[] {
  const line: { t: number; y: number }[] = [];
  for (const b of buckets) {
    if (b.n === 1 || b.tMin === b.tMax) line.push({ t: b.tMin, y: b.min });
    else if (b.tMin < b.tMax) line.push({ t: b.tMin, y: b.min }, { t: b.tMax, y: b.max });
    else line.push({ t: b.tMax, y: b.max }, { t: b.tMin, y: b.min });
  }
  return line;
}

/** Decimates points straight to a drawable line when there are more than 2 x buckets of them; else returns them. */
export function decimateForChart<T extends SeriesPoint>(
  points: readonly T[],
  buckets: number,
): { t: number; y: number }[] {
  if (points.length <= 2 * buckets) return points.map((p) => ({ t: p.t, y: p.y }));
  const fromT = points[0].t;
  const toT = points[points.length - 1].t;
  return bucketsToLine(minMaxBuckets(points, fromT, toT, buckets));
}
