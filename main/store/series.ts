// Runs in Node. A session's level record decimated for a chart (app/decimate.ts explains why min/max). A whole
// 24-hour session is two million readings; scanning them for every redraw takes seconds. So each session asked
// for keeps a fine min/max grid in memory (at most FINE_CAP cells, its cell width doubling as the session grows,
// about 1.5 MB), built by one SQL pass (over the readings of a short session, over the 1024 ms cells the
// database keeps of a long one) and then brought up to date with just the readings stored since. A
// chart's buckets are whole numbers of grid cells, so their counts, minima and maxima are exact. A window too
// narrow for the grid is read straight from the table (few rows: fast).
import type { PointRole } from '../../app/api';
import { check } from '../../app/errors';
import type { Series, SeriesBucket } from '../../app/decimate';
import type { Store } from './store';
import { connectionOf } from './connection';

export interface SeriesQuery {
  sessionId: string;
  /** Span, ms on the readings' clock; default the whole session. */
  fromT?: number;
  toT?: number;
  /** Number of buckets, 1..5000 (about the chart's width in pixels); fewer come back when cells align so. */
  buckets: number;
  /** Only readings of this point (carrier, upper, ...); default all. */
  role?: PointRole;
}

/** Most cells one session's grid holds (their width doubles instead): 1.5 MB. */
export const FINE_CAP = 65536;
/** Grids kept per database, most recently used first. */
const GRIDS_KEPT = 4;

/** A session's fine min/max grid: cell i covers [origin + i*width, origin + (i+1)*width). */
class Grid {
  n = new Uint32Array(1024);
  min = new Float64Array(1024).fill(Infinity);
  max = new Float64Array(1024).fill(-Infinity);
  floor = new Uint32Array(1024);
  /** Cells in use: 0..used-1. */
  used = 0;
  constructor(
    readonly origin: number,
    public width: number,
    public lastId: number,
  ) {}

  grow(cells: number): void {
    if (cells <= this.n.length) return;
    const size = Math.min(FINE_CAP, 2 ** Math.ceil(Math.log2(cells)));
    const n = new Uint32Array(size);
    const min = new Float64Array(size).fill(Infinity);
    const max = new Float64Array(size).fill(-Infinity);
    const floor = new Uint32Array(size);
    n.set(this.n);
    min.set(this.min);
    max.set(this.max);
    floor.set(this.floor);
    Object.assign(this, { n, min, max, floor });
  }

  /** Halves the resolution: cells 2i and 2i+1 become cell i. */
  private coarsen(): void {
    const half = Math.ceil(this.used / 2);
    for (let i = 0; i < half; i++) {
      const a = 2 * i;
      const b = a + 1 < this.used ? a + 1 : -1;
      this.n[i] = this.n[a] + (b >= 0 ? this.n[b] : 0);
      this.min[i] = b >= 0 ? Math.min(this.min[a], this.min[b]) : this.min[a];
      this.max[i] = b >= 0 ? Math.max(this.max[a], this.max[b]) : this.max[a];
      this.floor[i] = this.floor[a] + (b >= 0 ? this.floor[b] : 0);
    }
    this.n.fill(0, half);
    this.min.fill(Infinity, half);
    this.max.fill(-Infinity, half);
    this.floor.fill(0, half);
    this.used = half;
    this.width *= 2;
  }

  /** Adds one reading; false when it lies before the grid (the grid must be rebuilt). */
  add(t: number, y: number, floor: number): boolean {
    if (t < this.origin) return false;
    let i = Math.floor((t - this.origin) / this.width);
    while (i >= FINE_CAP) {
      this.coarsen();
      i = Math.floor((t - this.origin) / this.width);
    }
    this.grow(i + 1);
    this.used = Math.max(this.used, i + 1);
    this.n[i]++;
    if (y < this.min[i]) this.min[i] = y;
    if (y > this.max[i]) this.max[i] = y;
    this.floor[i] += floor;
    return true;
  }
}

/** Grids per database, keyed by session and point. */
const grids = new WeakMap<Store, Map<string, Grid>>();

function where(role: PointRole | null): string {
  return `session_no = @s${role ? ' AND role = @role' : ''}`;
}

/** Sessions up to this many readings get a grid made from the readings themselves (as fine as FINE_CAP allows). */
const FINE_READINGS = 100_000;
/** reading_cells' width, ms (migrations/006_compact_readings.sql). */
const CELL_MS = 1024;

/**
 * Builds a session's grid in one consistent read: from its readings when they are few, else from the
 * 1024 ms cells the database keeps for it (tens of thousands of rows for a whole day instead of millions).
 */
function buildGrid(store: Store, sessionNo: number, role: PointRole | null): Grid | null {
  const db = connectionOf(store);
  return db.transaction(() => {
    const p = { s: sessionNo, role };
    const cells = db
      .prepare(`SELECT MIN(cell) AS c0, MAX(cell) AS c1, SUM(n) AS n FROM reading_cells WHERE ${where(role)}`)
      .get(p) as { c0: number | null; c1: number | null; n: number | null };
    if (cells.c0 === null || cells.c1 === null || !cells.n) return null;
    const last = (db.prepare('SELECT MAX(id) AS id FROM readings').get() as { id: number }).id;
    if (cells.n <= FINE_READINGS) {
      const span = db
        .prepare(`SELECT MIN(t_ms) AS lo, MAX(t_ms) AS hi FROM readings WHERE ${where(role)}`)
        .get(p) as { lo: number; hi: number };
      const width = 2 ** Math.max(0, Math.ceil(Math.log2((span.hi - span.lo + 1) / FINE_CAP)));
      const g = new Grid(span.lo, width, last);
      const rows = db
        .prepare(
          `SELECT CAST((t_ms - @o) / @w AS INTEGER) AS i, COUNT(*) AS n, MIN(dbm_dut) AS lo, MAX(dbm_dut) AS hi,
                  SUM(floor_limited) AS f
           FROM readings WHERE ${where(role)} AND id <= @last GROUP BY i`,
        )
        .raw(true)
        .all({ ...p, o: g.origin, w: width, last }) as number[][];
      return fill(g, rows);
    }
    // Grid cells of 2^k database cells each, the first holding the session's first reading.
    const k = Math.max(0, Math.ceil(Math.log2((cells.c1 - cells.c0 + 1) / FINE_CAP)));
    const g = new Grid(cells.c0 * CELL_MS, CELL_MS * 2 ** k, last);
    const rows = db
      .prepare(
        `SELECT (cell - @c0) >> @k AS i, SUM(n) AS n, MIN(lo) AS lo, MAX(hi) AS hi, SUM(floor) AS f
         FROM reading_cells WHERE ${where(role)} GROUP BY i ORDER BY i`,
      )
      .raw(true)
      .all({ ...p, c0: cells.c0, k }) as number[][];
    return fill(g, rows);
  })();
}

function fill(g: Grid, rows: number[][]): Grid {
  g.used = rows.length ? rows[rows.length - 1][0] + 1 : 0;
  g.grow(g.used);
  for (const [i, n, lo, hi, f] of rows) {
    g.n[i] = n;
    g.min[i] = lo;
    g.max[i] = hi;
    g.floor[i] = f;
  }
  return g;
}

/** The session's grid, brought up to date with the readings stored since it was last asked for. */
function gridFor(store: Store, sessionId: string, sessionNo: number, role: PointRole | null): Grid | null {
  let mine = grids.get(store);
  if (!mine) grids.set(store, (mine = new Map()));
  const key = `${sessionId}\u0000${role ?? ''}`;
  let g = mine.get(key) ?? null;
  if (g) {
    // "+session_no": walk the rowid range of the new readings, not the whole session's index entries.
    const fresh = connectionOf(store)
      .prepare(
        `SELECT id, t_ms, dbm_dut, floor_limited FROM readings
         WHERE id > @last AND +session_no = @s${role ? ' AND role = @role' : ''} ORDER BY id`,
      )
      .raw(true)
      .all({ last: g.lastId, s: sessionNo, role }) as number[][];
    for (const [id, t, y, f] of fresh) {
      if (!g.add(t, y, f)) {
        g = null; // an older reading arrived (a bundle merged into this session): start again
        break;
      }
      g.lastId = id;
    }
  }
  if (!g) g = buildGrid(store, sessionNo, role);
  mine.delete(key);
  if (g) mine.set(key, g);
  while (mine.size > GRIDS_KEPT) mine.delete(mine.keys().next().value!);
  return g;
}

/** Straight from the table: exact times of each bucket's min and max; for windows the grid is too coarse for. */
function direct(
  store: Store,
  q: SeriesQuery,
  sessionNo: number,
  fromT: number,
  toT: number,
  role: PointRole | null,
): Series {
  const width = (toT - fromT) / q.buckets || 1;
  const params = { s: sessionNo, from: fromT, to: toT, w: width, last: q.buckets - 1, role };
  const inWindow = `${where(role)} AND t_ms >= @from AND t_ms <= @to`;
  const bucket = `MIN(@last, CAST((t_ms - @from) / @w AS INTEGER))`;
  // SQLite takes a bare column from the row that holds the MIN() (or MAX()) when the query has just one:
  // two passes give the time of the lowest and of the highest reading of each bucket.
  const lows = connectionOf(store)
    .prepare(
      `SELECT ${bucket} AS b, COUNT(*) AS n, MIN(dbm_dut) AS min, t_ms AS tMin, SUM(floor_limited) AS floor
       FROM readings WHERE ${inWindow} GROUP BY b ORDER BY b`,
    )
    .all(params) as { b: number; n: number; min: number; tMin: number; floor: number }[];
  const highs = connectionOf(store)
    .prepare(
      `SELECT ${bucket} AS b, MAX(dbm_dut) AS max, t_ms AS tMax FROM readings WHERE ${inWindow} GROUP BY b`,
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

export function sessionSeries(store: Store, q: SeriesQuery): Series {
  const sessionNo = store.sessionNo(q.sessionId);
  check(Number.isInteger(q.buckets) && q.buckets >= 1 && q.buckets <= 5000, 'buckets', 'must be 1..5000');
  const role = q.role ?? null;
  const g = gridFor(store, q.sessionId, sessionNo, role);
  if (!g) {
    const at = q.fromT ?? 0;
    return { sessionId: q.sessionId, fromT: at, toT: q.toT ?? at, bucketMs: 0, total: 0, buckets: [] };
  }
  const fromT = q.fromT ?? g.origin;
  const toT = q.toT ?? g.origin + g.used * g.width;
  check(toT >= fromT, 'toT', `must not be before fromT (${fromT}), got ${toT}`);
  // Cells too coarse for what is asked (a short window): read the window itself.
  if ((toT - fromT) / q.buckets < g.width || fromT < g.origin)
    return direct(store, q, sessionNo, fromT, toT, role);
  // Buckets of k whole cells, from the cell holding fromT to the one holding toT.
  const i0 = Math.floor((fromT - g.origin) / g.width);
  const i1 = Math.min(g.used - 1, Math.floor((toT - g.origin) / g.width));
  const k = Math.max(1, Math.ceil((i1 - i0 + 1) / q.buckets));
  const count = Math.max(0, Math.ceil((i1 - i0 + 1) / k));
  const width = k * g.width;
  const out: SeriesBucket[] = [];
  let total = 0;
  for (let b = 0; b < count; b++) {
    let n = 0;
    let min = Infinity;
    let max = -Infinity;
    let iMin = -1;
    let iMax = -1;
    let floor = 0;
    for (let i = i0 + b * k; i < Math.min(i0 + (b + 1) * k, i1 + 1); i++) {
      if (!g.n[i]) continue;
      n += g.n[i];
      floor += g.floor[i];
      if (g.min[i] < min) [min, iMin] = [g.min[i], i];
      if (g.max[i] > max) [max, iMax] = [g.max[i], i];
    }
    if (!n) continue;
    total += n;
    const t0 = g.origin + (i0 + b * k) * g.width;
    // When in its cell the extreme came is not kept: the cell's middle, within one cell's width.
    out.push({
      t0,
      t1: t0 + width,
      n,
      min,
      max,
      tMin: g.origin + (iMin + 0.5) * g.width,
      tMax: g.origin + (iMax + 0.5) * g.width,
      floor,
    });
  }
  const start = g.origin + i0 * g.width;
  return {
    sessionId: q.sessionId,
    fromT: start,
    toT: start + count * width,
    bucketMs: width,
    total,
    buckets: out,
  };
}
