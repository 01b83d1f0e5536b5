// Runs in Node. The repositories over the database: designs, revisions, units, sessions, readings, gaps.
// Every write goes through a transaction; a throw rolls it back, so nothing is half-written.
import { createHash, randomUUID } from 'node:crypto';
import { BenchError } from '../../app/errors';
import type {
  Design,
  PointRole,
  Reading,
  ReceiverProfile,
  Revision,
  Session,
  SessionSummary,
  TrimDef,
  TrimPositions,
  Tree,
  Unit,
} from '../../app/api';
import { openDb, type Db, type OpenOptions } from './db';
import { registerConnection } from './connection';
import type { NewReading, ReadingSink } from '../live/sink';
import { uidToDb } from './uid';

export interface NewSession {
  unitId: string;
  receiver: ReceiverProfile;
  path: unknown[];
  carrierHz: number;
  toneHz: number;
  txPepDbm: number;
  rxPepDbm: number;
  operator: string;
  notes: string;
  trims: TrimDef[];
  startedAt?: string;
  id?: string;
}

export type { NewReading } from '../live/sink';

/** A row of the readings table as SQLite returns it. */
export interface ReadingRow {
  id: number;
  session_id: string;
  t_ms: number;
  freq_hz: number;
  role: PointRole;
  raw: number;
  dbm_rx: number;
  dbm_dut: number;
  u_db: number;
  settled: number;
  kept: number;
  floor_limited: number;
  overload: number;
  trims_json: string;
  note: string;
}

interface SessionRow {
  id: string;
  unit_id: string;
  receiver_json: string;
  path_json: string;
  carrier_hz: number;
  tone_hz: number;
  tx_pep_dbm: number;
  rx_pep_dbm: number;
  operator: string;
  notes: string;
  trims_json: string;
  started_at: string;
  ended_at: string | null;
}

const now = () => new Date().toISOString();

/** The one mapper from a readings row to a Reading. */
export function rowToReading(r: ReadingRow): Reading {
  return {
    id: r.id,
    sessionId: r.session_id,
    t: r.t_ms,
    freqHz: r.freq_hz,
    role: r.role,
    raw: r.raw,
    dbmRx: r.dbm_rx,
    dbmDut: r.dbm_dut,
    uDb: r.u_db,
    settled: r.settled === 1,
    kept: r.kept === 1,
    floorLimited: r.floor_limited === 1,
    overload: r.overload === 1,
    trims: JSON.parse(r.trims_json) as TrimPositions,
    note: r.note,
  };
}

function rowToSession(r: SessionRow): Session {
  return {
    id: r.id,
    unitId: r.unit_id,
    receiver: JSON.parse(r.receiver_json) as ReceiverProfile,
    path: JSON.parse(r.path_json) as unknown[],
    carrierHz: r.carrier_hz,
    toneHz: r.tone_hz,
    txPepDbm: r.tx_pep_dbm,
    rxPepDbm: r.rx_pep_dbm,
    operator: r.operator,
    notes: r.notes,
    trims: JSON.parse(r.trims_json) as TrimDef[],
    startedAt: r.started_at,
    endedAt: r.ended_at,
  };
}

function isUniqueViolation(e: unknown): boolean {
  return e instanceof Error && /UNIQUE constraint failed/.test(e.message);
}

export class Store implements ReadingSink {
  private readonly db: Db;
  readonly file: string;
  private readonly insertReadingStmt;
  private readonly sessionEndStmt;
  private readonly correctionIds = new Map<string, number>();
  private readonly trimIds = new Map<string, number>();

  /** Opened for reading only: every write is refused by SQLite, and nothing that writes on start runs. */
  readonly readonly: boolean;

  constructor(file: string, opts: OpenOptions = {}) {
    this.file = file;
    this.readonly = opts.readonly ?? false;
    this.db = openDb(file, opts);
    registerConnection(this, this.db);
    this.sessionEndStmt = this.db.prepare('SELECT ended_at, no FROM sessions WHERE id = ?');
    this.insertReadingStmt = this.db.prepare(
      `INSERT INTO readings (uid, session_no, t_ms, freq_hz, role, raw, dbm_rx, dbm_dut, u_db, settled, kept,
         floor_limited, overload, trims_id, correction_id, note)
       VALUES (@uid, @session_no, @t_ms, @freq_hz, @role, @raw, @dbm_rx, @dbm_dut, @u_db, @settled, @kept,
         @floor_limited, @overload, @trims_id, @correction_id, @note)`,
    );
  }

  close(): void {
    this.db.close();
  }

  /**
   * Runs fn in one transaction; a throw rolls everything back. It begins IMMEDIATE: the write lock is taken at
   * the start (waiting up to the busy timeout for another program's write to end), so a transaction that reads
   * before it writes never fails half-way because another writer went first.
   */
  tx<T>(fn: () => T): T {
    try {
      return this.db.transaction(fn).immediate();
    } catch (e) {
      // A correction or trimmer setting first stored in the rolled-back transaction is gone again.
      this.correctionIds.clear();
      this.trimIds.clear();
      throw e;
    }
  }

  // ---- designs, revisions, units -------------------------------------------------------------

  createDesign(input: { name: string; notes: string; id?: string; createdAt?: string }): Design {
    const d: Design = {
      id: input.id ?? randomUUID(),
      name: input.name,
      notes: input.notes,
      createdAt: input.createdAt ?? now(),
    };
    try {
      this.db
        .prepare('INSERT INTO designs (id, name, notes, created_at) VALUES (?, ?, ?, ?)')
        .run(d.id, d.name, d.notes, d.createdAt);
    } catch (e) {
      if (isUniqueViolation(e))
        throw new BenchError('ECONFLICT', `a design named "${d.name}" already exists`, 'name');
      throw e;
    }
    return d;
  }

  getDesign(id: string): Design {
    const r = this.db
      .prepare('SELECT id, name, notes, created_at AS createdAt FROM designs WHERE id = ?')
      .get(id) as Design | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no design with id "${id}"`, 'designId');
    return r;
  }

  createRevision(input: {
    designId: string;
    name: string;
    changes: string;
    id?: string;
    createdAt?: string;
  }): Revision {
    this.getDesign(input.designId);
    const r: Revision = {
      id: input.id ?? randomUUID(),
      designId: input.designId,
      name: input.name,
      changes: input.changes,
      createdAt: input.createdAt ?? now(),
    };
    try {
      this.db
        .prepare('INSERT INTO revisions (id, design_id, name, changes, created_at) VALUES (?, ?, ?, ?, ?)')
        .run(r.id, r.designId, r.name, r.changes, r.createdAt);
    } catch (e) {
      if (isUniqueViolation(e))
        throw new BenchError('ECONFLICT', `revision "${r.name}" already exists in this design`, 'name');
      throw e;
    }
    return r;
  }

  getRevision(id: string): Revision {
    const r = this.db
      .prepare(
        'SELECT id, design_id AS designId, name, changes, created_at AS createdAt FROM revisions WHERE id = ?',
      )
      .get(id) as Revision | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no revision with id "${id}"`, 'revisionId');
    return r;
  }

  createUnit(input: {
    revisionId: string;
    serial: string;
    buildDate: string;
    builder: string;
    notes: string;
    id?: string;
    createdAt?: string;
  }): Unit {
    this.getRevision(input.revisionId);
    const u: Unit = {
      id: input.id ?? randomUUID(),
      revisionId: input.revisionId,
      serial: input.serial,
      buildDate: input.buildDate,
      builder: input.builder,
      notes: input.notes,
      createdAt: input.createdAt ?? now(),
    };
    try {
      this.db
        .prepare(
          'INSERT INTO units (id, revision_id, serial, build_date, builder, notes, created_at) VALUES (?, ?, ?, ?, ?, ?, ?)',
        )
        .run(u.id, u.revisionId, u.serial, u.buildDate, u.builder, u.notes, u.createdAt);
    } catch (e) {
      if (isUniqueViolation(e))
        throw new BenchError('ECONFLICT', `a unit with serial "${u.serial}" already exists`, 'serial');
      throw e;
    }
    return u;
  }

  getUnit(id: string): Unit {
    const u = this.db
      .prepare(
        `SELECT id, revision_id AS revisionId, serial, build_date AS buildDate, builder, notes, created_at AS createdAt
         FROM units WHERE id = ?`,
      )
      .get(id) as Unit | undefined;
    if (!u) throw new BenchError('ENOTFOUND', `no unit with id "${id}"`, 'unitId');
    return u;
  }

  findUnitBySerial(serial: string): Unit | undefined {
    const u = this.db.prepare('SELECT id FROM units WHERE serial = ?').get(serial) as
      { id: string } | undefined;
    return u ? this.getUnit(u.id) : undefined;
  }

  /**
   * The unit with this serial under this design and revision, each found by name or created (in the caller's
   * transaction). A serial already used by a unit of another design or revision is ECONFLICT on "serial".
   */
  findOrCreateUnitByNames(names: { design: string; revision: string; serial: string }): Unit {
    const byName = this.db.prepare('SELECT id FROM designs WHERE name = ?').get(names.design) as
      { id: string } | undefined;
    const designId = byName?.id ?? this.createDesign({ name: names.design, notes: '' }).id;
    const rev = this.db
      .prepare('SELECT id FROM revisions WHERE design_id = ? AND name = ?')
      .get(designId, names.revision) as { id: string } | undefined;
    const revisionId = rev?.id ?? this.createRevision({ designId, name: names.revision, changes: '' }).id;
    const unit = this.findUnitBySerial(names.serial);
    if (!unit)
      return this.createUnit({ revisionId, serial: names.serial, buildDate: '', builder: '', notes: '' });
    if (unit.revisionId !== revisionId) {
      const owner = this.db
        .prepare(
          `SELECT d.name AS design, r.name AS revision FROM revisions r JOIN designs d ON d.id = r.design_id
           WHERE r.id = ?`,
        )
        .get(unit.revisionId) as { design: string; revision: string };
      throw new BenchError(
        'ECONFLICT',
        `unit "${names.serial}" belongs to ${owner.design} ${owner.revision}, not ${names.design} ${names.revision}`,
        'serial',
      );
    }
    return unit;
  }

  tree(): Tree {
    const designs = this.db
      .prepare('SELECT id, name, notes, created_at AS createdAt FROM designs ORDER BY name')
      .all() as Design[];
    const revisions = this.db
      .prepare(
        'SELECT id, design_id AS designId, name, changes, created_at AS createdAt FROM revisions ORDER BY name',
      )
      .all() as Revision[];
    const units = this.db
      .prepare(
        `SELECT id, revision_id AS revisionId, serial, build_date AS buildDate, builder, notes, created_at AS createdAt
         FROM units ORDER BY serial`,
      )
      .all() as Unit[];
    return designs.map((d) => ({
      ...d,
      revisions: revisions
        .filter((r) => r.designId === d.id)
        .map((r) => ({ ...r, units: units.filter((u) => u.revisionId === r.id) })),
    }));
  }

  // ---- sessions ------------------------------------------------------------------------------

  createSession(s: NewSession): Session {
    this.getUnit(s.unitId);
    const id = s.id ?? randomUUID();
    this.db
      .prepare(
        `INSERT INTO sessions (id, unit_id, receiver_json, path_json, carrier_hz, tone_hz, tx_pep_dbm, rx_pep_dbm,
           operator, notes, trims_json, started_at, ended_at)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, NULL)`,
      )
      .run(
        id,
        s.unitId,
        JSON.stringify(s.receiver),
        JSON.stringify(s.path),
        s.carrierHz,
        s.toneHz,
        s.txPepDbm,
        s.rxPepDbm,
        s.operator,
        s.notes,
        JSON.stringify(s.trims),
        s.startedAt ?? now(),
      );
    return this.getSession(id);
  }

  /** A session's number, which its readings refer to (schema 6). */
  sessionNo(id: string): number {
    const r = this.db.prepare('SELECT no FROM sessions WHERE id = ?').get(id) as { no: number } | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no session with id "${id}"`, 'sessionId');
    return r.no;
  }

  getSession(id: string): Session {
    const r = this.db.prepare('SELECT * FROM sessions WHERE id = ?').get(id) as SessionRow | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no session with id "${id}"`, 'sessionId');
    return rowToSession(r);
  }

  /** Sets when a session started (the demo dates its invented sessions on the day they happened). */
  redateSession(id: string, startedAt: string): void {
    this.getSession(id);
    this.db.prepare('UPDATE sessions SET started_at = ? WHERE id = ?').run(startedAt, id);
  }

  endSession(id: string, at = now()): void {
    this.db.prepare('UPDATE sessions SET ended_at = ? WHERE id = ? AND ended_at IS NULL').run(at, id);
  }

  /**
   * Takes an ended session up again, knowingly: its end is cleared, and its notes record when it had ended
   * and when it was continued, so the sheet and every export still tell the two sittings apart.
   */
  continueSession(id: string, at = now()): void {
    const s = this.getSession(id);
    if (s.endedAt === null) return;
    const line = `Continued ${at.slice(0, 16).replace('T', ' ')} UTC after it had ended ${s.endedAt.slice(0, 16).replace('T', ' ')} UTC.`;
    this.db
      .prepare(
        `UPDATE sessions SET ended_at = NULL, notes = CASE WHEN notes = '' THEN ? ELSE notes || char(10) || ? END
         WHERE id = ? AND ended_at IS NOT NULL`,
      )
      .run(line, line, id);
  }

  listSessions(unitId?: string): SessionSummary[] {
    const rows = this.db
      .prepare(
        `SELECT s.id, s.unit_id AS unitId, u.serial, r.name AS revision, d.name AS design, s.started_at AS startedAt,
                s.ended_at AS endedAt, s.operator,
                (SELECT COALESCE(SUM(c.n), 0) FROM reading_cells c WHERE c.session_no = s.no) AS readings,
                (SELECT COUNT(*) FROM readings x WHERE x.session_no = s.no AND x.kept = 1) AS kept,
                (SELECT MIN(x.dbm_dut) FROM readings x WHERE x.session_no = s.no AND x.kept = 1 AND x.role = 'carrier')
                  AS bestCarrierDbm
         FROM sessions s JOIN units u ON u.id = s.unit_id JOIN revisions r ON r.id = u.revision_id
              JOIN designs d ON d.id = r.design_id
         WHERE (? IS NULL OR s.unit_id = ?)
         ORDER BY s.started_at DESC`,
      )
      .all(unitId ?? null, unitId ?? null) as SessionSummary[];
    return rows;
  }

  // ---- readings ------------------------------------------------------------------------------

  private correctionId(calibration: unknown, path: unknown[]): number {
    const cal = JSON.stringify(calibration ?? null);
    const p = JSON.stringify(path);
    const digest = createHash('sha256').update(cal).update('\0').update(p).digest('hex');
    const cached = this.correctionIds.get(digest);
    if (cached !== undefined) return cached;
    this.db
      .prepare('INSERT OR IGNORE INTO corrections (digest, calibration_json, path_json) VALUES (?, ?, ?)')
      .run(digest, cal, p);
    const row = this.db.prepare('SELECT id FROM corrections WHERE digest = ?').get(digest) as { id: number };
    this.correctionIds.set(digest, row.id);
    return row.id;
  }

  /** The row of trim_sets holding one trimmer setting, as JSON text (stored once, as corrections are). */
  trimSetId(json: string): number {
    const cached = this.trimIds.get(json);
    if (cached !== undefined) return cached;
    this.db.prepare('INSERT OR IGNORE INTO trim_sets (json) VALUES (?)').run(json);
    const row = this.db.prepare('SELECT id FROM trim_sets WHERE json = ?').get(json) as { id: number };
    this.trimIds.set(json, row.id);
    return row.id;
  }

  /** Stores one reading and returns it with its row id. The write is committed when this returns. */
  addReading(r: NewReading): Reading {
    return this.tx(() => this.insertReading(r));
  }

  /** Stores many readings in one transaction. */
  addReadings(list: NewReading[]): Reading[] {
    return this.tx(() => list.map((r) => this.insertReading(r)));
  }

  private insertReading(r: NewReading): Reading {
    // Checked inside the reading's own (immediate) transaction, so an end written by another program
    // a moment ago is seen.
    const s = this.sessionEndStmt.get(r.sessionId) as { ended_at: string | null; no: number } | undefined;
    if (!s) throw new BenchError('ENOTFOUND', `no session with id "${r.sessionId}"`, 'sessionId');
    if (s.ended_at)
      throw new BenchError(
        'ECONFLICT',
        `this session ended at ${s.ended_at}: nothing more is stored in it; start a new session to measure again`,
        'sessionId',
      );
    for (const [k, v] of Object.entries({
      t: r.t,
      freqHz: r.freqHz,
      raw: r.raw,
      dbmRx: r.dbmRx,
      dbmDut: r.dbmDut,
      uDb: r.uDb,
    })) {
      if (!Number.isFinite(v))
        throw new BenchError('EINVAL', `must be a finite number, got ${v}`, `reading.${k}`);
    }
    const info = this.insertReadingStmt.run({
      uid: uidToDb(r.uid ?? randomUUID()),
      session_no: s.no,
      t_ms: r.t,
      freq_hz: r.freqHz,
      role: r.role,
      raw: r.raw,
      dbm_rx: r.dbmRx,
      dbm_dut: r.dbmDut,
      u_db: r.uDb,
      settled: r.settled ? 1 : 0,
      kept: r.kept ? 1 : 0,
      floor_limited: r.floorLimited ? 1 : 0,
      overload: r.overload ? 1 : 0,
      trims_id: this.trimSetId(JSON.stringify(r.trims)),
      correction_id: this.correctionId(r.calibration, r.path),
      note: r.note ?? '',
    });
    return {
      id: Number(info.lastInsertRowid),
      sessionId: r.sessionId,
      t: r.t,
      freqHz: r.freqHz,
      role: r.role,
      raw: r.raw,
      dbmRx: r.dbmRx,
      dbmDut: r.dbmDut,
      uDb: r.uDb,
      settled: r.settled,
      kept: r.kept,
      floorLimited: r.floorLimited,
      overload: r.overload,
      trims: r.trims,
      note: r.note ?? '',
    };
  }

  readings(sessionId: string, opts: { keptOnly?: boolean; limit?: number } = {}): Reading[] {
    this.getSession(sessionId);
    const rows = this.db
      .prepare(
        `SELECT x.*, ? AS session_id, t.json AS trims_json
         FROM (SELECT * FROM readings WHERE session_no = ? AND (? = 0 OR kept = 1) ORDER BY t_ms DESC, id DESC LIMIT ?) x
         JOIN trim_sets t ON t.id = x.trims_id
         ORDER BY x.t_ms, x.id`,
      )
      .all(
        sessionId,
        this.sessionNo(sessionId),
        opts.keptOnly ? 1 : 0,
        opts.limit ?? 1_000_000,
      ) as ReadingRow[];
    return rows.map(rowToReading);
  }

  /** The calibration and path a stored reading was corrected with. */
  correctionOf(readingId: number): { calibration: unknown; path: unknown[] } {
    const r = this.db
      .prepare(
        'SELECT c.calibration_json, c.path_json FROM readings x JOIN corrections c ON c.id = x.correction_id WHERE x.id = ?',
      )
      .get(readingId) as { calibration_json: string; path_json: string } | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no reading with id ${readingId}`, 'readingId');
    return { calibration: JSON.parse(r.calibration_json), path: JSON.parse(r.path_json) as unknown[] };
  }

  addGap(sessionId: string, tStartMs: number, code: string, message: string): number {
    const info = this.db
      .prepare('INSERT INTO gaps (session_id, t_start_ms, t_end_ms, code, message) VALUES (?, ?, NULL, ?, ?)')
      .run(sessionId, tStartMs, code, message);
    return Number(info.lastInsertRowid);
  }

  closeGap(id: number, tEndMs: number): void {
    this.db.prepare('UPDATE gaps SET t_end_ms = ? WHERE id = ?').run(tEndMs, id);
  }

  gaps(
    sessionId: string,
  ): { id: number; tStartMs: number; tEndMs: number | null; code: string; message: string }[] {
    return this.db
      .prepare(
        'SELECT id, t_start_ms AS tStartMs, t_end_ms AS tEndMs, code, message FROM gaps WHERE session_id = ? ORDER BY id',
      )
      .all(sessionId) as {
      id: number;
      tStartMs: number;
      tEndMs: number | null;
      code: string;
      message: string;
    }[];
  }
}
