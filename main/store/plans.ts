// Runs in Node. Repository for frequency-stepped plan runs (schema 002): the plan, its state, and each point's
// averaged result with the readings it was made of. A point's result and its reading links are written in one
// transaction, so a crash leaves a point either done or pending, never half.
import { randomUUID } from 'node:crypto';
import type { PointRole } from '../../app/api';
import { BenchError } from '../../app/errors';
import type { PlanPoint, PlanRun, PlanSpec, PlanState, PointAverage } from '../../app/plan';
import type { Store } from './store';
import { connectionOf } from './connection';
import { LeaseRepo } from './leases';

interface RunRow {
  id: string;
  session_id: string;
  spec_json: string;
  state: PlanState;
  message: string;
  created_at: string;
  updated_at: string;
}

interface PointRow {
  idx: number;
  role: PointRole;
  freq_hz: number;
  state: 'pending' | 'done';
  n: number | null;
  dbm_rx: number | null;
  dbm_dut: number | null;
  u_db: number | null;
  u_stat_db: number | null;
  spread_db: number | null;
  floor_limited: number | null;
  overload: number | null;
  settled: number | null;
  t_start_ms: number | null;
  t_end_ms: number | null;
}

const now = () => new Date().toISOString();

function rowToPoint(r: PointRow): PlanPoint {
  const avg: PointAverage | null =
    r.state === 'done' && r.n !== null
      ? {
          n: r.n,
          dbmRx: r.dbm_rx!,
          dbmDut: r.dbm_dut!,
          uDb: r.u_db!,
          uStatDb: r.u_stat_db!,
          spreadDb: r.spread_db!,
          floorLimited: r.floor_limited === 1,
          overload: r.overload === 1,
          settled: r.settled === 1,
        }
      : null;
  return {
    idx: r.idx,
    role: r.role,
    freqHz: r.freq_hz,
    state: r.state,
    avg,
    tStartMs: r.t_start_ms,
    tEndMs: r.t_end_ms,
  };
}

export class PlanRepo {
  constructor(private readonly store: Store) {}

  private get db() {
    return connectionOf(this.store);
  }

  createRun(sessionId: string, spec: PlanSpec, points: { role: PointRole; freqHz: number }[]): PlanRun {
    this.store.getSession(sessionId);
    const id = randomUUID();
    const at = now();
    this.store.tx(() => {
      this.db
        .prepare(
          `INSERT INTO plan_runs (id, session_id, spec_json, state, message, created_at, updated_at)
           VALUES (?, ?, ?, 'running', '', ?, ?)`,
        )
        .run(id, sessionId, JSON.stringify(spec), at, at);
      const ins = this.db.prepare(
        `INSERT INTO plan_points (run_id, idx, role, freq_hz, state) VALUES (?, ?, ?, ?, 'pending')`,
      );
      points.forEach((p, i) => ins.run(id, i, p.role, p.freqHz));
    });
    return this.getRun(id);
  }

  getRun(id: string): PlanRun {
    const r = this.db.prepare('SELECT * FROM plan_runs WHERE id = ?').get(id) as RunRow | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no plan run with id "${id}"`, 'planId');
    const pts = this.db
      .prepare('SELECT * FROM plan_points WHERE run_id = ? ORDER BY idx')
      .all(id) as PointRow[];
    return {
      id: r.id,
      sessionId: r.session_id,
      spec: JSON.parse(r.spec_json) as PlanSpec,
      state: r.state,
      message: r.message,
      createdAt: r.created_at,
      updatedAt: r.updated_at,
      points: pts.map(rowToPoint),
    };
  }

  listRuns(sessionId?: string): PlanRun[] {
    const ids = this.db
      .prepare(
        'SELECT id FROM plan_runs WHERE (? IS NULL OR session_id = ?) ORDER BY created_at DESC, rowid DESC',
      )
      .all(sessionId ?? null, sessionId ?? null) as { id: string }[];
    return ids.map((x) => this.getRun(x.id));
  }

  setState(id: string, state: PlanState, message = ''): void {
    const info = this.db
      .prepare('UPDATE plan_runs SET state = ?, message = ?, updated_at = ? WHERE id = ?')
      .run(state, message, now(), id);
    if (info.changes === 0) throw new BenchError('ENOTFOUND', `no plan run with id "${id}"`, 'planId');
  }

  /** Records a point's average and the readings it came from, in one transaction. */
  completePoint(
    runId: string,
    idx: number,
    avg: PointAverage,
    readingIds: number[],
    tStartMs: number,
    tEndMs: number,
  ): void {
    this.store.tx(() => {
      const info = this.db
        .prepare(
          `UPDATE plan_points SET state = 'done', n = ?, dbm_rx = ?, dbm_dut = ?, u_db = ?, u_stat_db = ?, spread_db = ?,
             floor_limited = ?, overload = ?, settled = ?, t_start_ms = ?, t_end_ms = ?
           WHERE run_id = ? AND idx = ? AND state = 'pending'`,
        )
        .run(
          avg.n,
          avg.dbmRx,
          avg.dbmDut,
          avg.uDb,
          avg.uStatDb,
          avg.spreadDb,
          avg.floorLimited ? 1 : 0,
          avg.overload ? 1 : 0,
          avg.settled ? 1 : 0,
          tStartMs,
          tEndMs,
          runId,
          idx,
        );
      if (info.changes === 0)
        throw new BenchError('ECONFLICT', `point ${idx} of plan ${runId} is not pending`, 'idx');
      const link = this.db.prepare(
        'INSERT INTO plan_point_readings (run_id, idx, reading_id) VALUES (?, ?, ?)',
      );
      for (const rid of readingIds) link.run(runId, idx, rid);
      this.db.prepare('UPDATE plan_runs SET updated_at = ? WHERE id = ?').run(now(), runId);
    });
  }

  /** Reading ids a point's average was made of. */
  pointReadings(runId: string, idx: number): number[] {
    return (
      this.db
        .prepare(
          'SELECT reading_id FROM plan_point_readings WHERE run_id = ? AND idx = ? ORDER BY reading_id',
        )
        .all(runId, idx) as { reading_id: number }[]
    ).map((r) => r.reading_id);
  }

  /**
   * A run still marked running whose session no living program holds (schema 005's lease) was cut off: it is
   * marked interrupted and can be resumed. A run another program is driving right now is left alone.
   */
  markInterrupted(): number {
    const leases = new LeaseRepo(this.store);
    const running = this.db.prepare(`SELECT id, session_id FROM plan_runs WHERE state = 'running'`).all() as {
      id: string;
      session_id: string;
    }[];
    const mark = this.db.prepare(
      `UPDATE plan_runs SET state = 'interrupted', message = 'the program stopped while the plan ran', updated_at = ?
       WHERE id = ? AND state = 'running'`,
    );
    let n = 0;
    for (const r of running) {
      const h = leases.holder(r.session_id);
      if (h && leases.alive(h)) continue;
      n += mark.run(now(), r.id).changes;
    }
    return n;
  }
}
