// Runs in Node. A session's level record decimated in SQL for a chart (app/decimate.ts explains why min/max):
// one pass over the session's index range, so a 24-hour session of two million readings comes back as a few
// thousand numbers without ever loading its readings into memory.
import type { PointRole } from '../../app/api';
import { check } from '../../app/errors';
import type { Series } from '../../app/decimate';
import type { Store } from './store';

export interface SeriesQuery {
  sessionId: string;
  /** Span, ms on the readings' clock; default the whole session. */
  fromT?: number;
  toT?: number;
  /** Number of buckets, 1..5000 (about the chart's width in pixels). */
  buckets: number;
  /** Only readings of this point (carrier, upper, ...); default all. */
  role?: PointRole;
}

export function sessionSeries(store: Store, q: SeriesQuery): Series {
  store.getSession(q.sessionId);
  check(Number.isInteger(q.buckets) && q.buckets >= 1 && q.buckets <= 5000, 'buckets', 'must be 1..5000');
  const role = q.role ?? null;
  const span = store.db
    .prepare(
      `SELECT MIN(t_ms) AS lo, MAX(t_ms) AS hi FROM readings
       WHERE session_id = ? AND (? IS NULL OR role = ?)`,
    )
    .get(q.sessionId, role, role) as { lo: number | null; hi: number | null };
  const fromT = q.fromT ?? span.lo ?? 0;
  const toT = q.toT ?? span.hi ?? fromT;
  check(toT >= fromT, 'toT', `must not be before fromT (${fromT}), got ${toT}`);
  const width = (toT - fromT) / q.buckets || 1;
  const params = { s: q.sessionId, from: fromT, to: toT, w: width, last: q.buckets - 1, role };
  const where = `session_id = @s AND t_ms >= @from AND t_ms <= @to AND (@role IS NULL OR role = @role)`;
  const bucket = `MIN(@last, CAST((t_ms - @from) / @w AS INTEGER))`;
  // SQLite takes a bare column from the row that holds the MIN() (or MAX()) when the query has just one:
  // two passes give the time of the lowest and of the highest reading of each bucket.
  const lows = store.db
    .prepare(
      `SELECT ${bucket} AS b, COUNT(*) AS n, MIN(dbm_dut) AS min, t_ms AS tMin, SUM(floor_limited) AS floor
       FROM readings WHERE ${where} GROUP BY b ORDER BY b`,
    )
    .all(params) as { b: number; n: number; min: number; tMin: number; floor: number }[];
  const highs = store.db
    .prepare(
      `SELECT ${bucket} AS b, MAX(dbm_dut) AS max, t_ms AS tMax FROM readings WHERE ${where} GROUP BY b`,
    )
    .all(params) as { b: number; max: number; tMax: number }[];
  const byBucket = new Map(highs.map((h) => [h.b, h]));
  let total = 0;
  const buckets = lows.map((l) => {
    const h = byBucket.get(l.b)!;
    total += l.n;
    return {
      t0: fromT + l.b * width,
      t1: fromT + (l.b + 1) * width,
      n: l.n,
      min: l.min,
      max: h.max,
      tMin: l.tMin,
      tMax: h.tMax,
      floor: l.floor,
    };
  });
  return { sessionId: q.sessionId, fromT, toT, bucketMs: width, total, buckets };
}
