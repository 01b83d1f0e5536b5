// Runs in Node. Keeping the records over time: renaming designs and revisions, what changed on a board,
// unit details, the emission a session was measured in, user limit sets and each unit's sheet settings.
// Each write is one statement or one transaction; bad input throws BenchError naming the field.
import { randomUUID } from 'node:crypto';
import { EMISSIONS, type Emission, type SuppressionReference } from '../../app/analysis';
import type { Design, PointRole, Revision, Unit } from '../../app/api';
import type { LimitSetEntry, SheetSettings, UnitListing } from '../../app/api/records';
import { BenchError } from '../../app/errors';
import { DEFAULT_SHEET_LIMIT_SETS, PRESETS, isPresetId, validateLimitSet } from '../../app/limits';
import type { Store } from './store';
import { connectionOf } from './connection';

const now = () => new Date().toISOString();

function isUniqueViolation(e: unknown): boolean {
  return e instanceof Error && /UNIQUE constraint failed/.test(e.message);
}

/** A kept reading with the calibration and path its stored correction was made with (JSON as stored). */
export interface KeptRow {
  id: number;
  t_ms: number;
  freq_hz: number;
  role: PointRole;
  dbm_dut: number;
  u_db: number;
  floor_limited: number;
  overload: number;
  settled: number;
  trims_json: string;
  note: string;
  correction_id: number;
  calibration_json: string;
  path_json: string;
}

/** A row of the limit_sets table. */
export interface LimitRow {
  id: string;
  name: string;
  source: string;
  standing: string;
  notes: string;
  rules_json: string;
  created_at: string;
  updated_at: string;
}

export class Records {
  constructor(readonly store: Store) {}

  private get db() {
    return connectionOf(this.store);
  }

  // ---- designs, revisions, units ---------------------------------------------------------------

  /** A design by id or by exact name. */
  findDesign(nameOrId: string, field = 'design'): Design {
    const r = this.db
      .prepare('SELECT id, name, notes, created_at AS createdAt FROM designs WHERE id = ? OR name = ?')
      .get(nameOrId, nameOrId) as Design | undefined;
    if (!r) {
      const names = (
        this.db.prepare('SELECT name FROM designs ORDER BY name').all() as { name: string }[]
      ).map((x) => `"${x.name}"`);
      throw new BenchError(
        'ENOTFOUND',
        `no design "${nameOrId}"${names.length ? ` (there is ${names.join(', ')})` : ' (the database has none yet)'}`,
        field,
      );
    }
    return r;
  }

  unitBySerial(serial: string, field = 'serial'): Unit {
    const u = this.store.findUnitBySerial(serial);
    if (!u) throw new BenchError('ENOTFOUND', `no unit with serial "${serial}"`, field);
    return u;
  }

  updateDesign(a: { designId: string; name?: string; notes?: string }): Design {
    const d = this.store.getDesign(a.designId);
    const next = { ...d, name: a.name ?? d.name, notes: a.notes ?? d.notes };
    try {
      this.db.prepare('UPDATE designs SET name = ?, notes = ? WHERE id = ?').run(next.name, next.notes, d.id);
    } catch (e) {
      if (isUniqueViolation(e))
        throw new BenchError('ECONFLICT', `a design named "${next.name}" already exists`, 'name');
      throw e;
    }
    return next;
  }

  updateRevision(a: { revisionId: string; name?: string; changes?: string }): Revision {
    const r = this.store.getRevision(a.revisionId);
    const next = { ...r, name: a.name ?? r.name, changes: a.changes ?? r.changes };
    try {
      this.db
        .prepare('UPDATE revisions SET name = ?, changes = ? WHERE id = ?')
        .run(next.name, next.changes, r.id);
    } catch (e) {
      if (isUniqueViolation(e))
        throw new BenchError('ECONFLICT', `revision "${next.name}" already exists in this design`, 'name');
      throw e;
    }
    return next;
  }

  updateUnit(a: {
    unitId: string;
    serial?: string;
    buildDate?: string;
    builder?: string;
    notes?: string;
    revisionId?: string;
  }): Unit {
    const u = this.store.getUnit(a.unitId);
    if (a.revisionId !== undefined) {
      const to = this.store.getRevision(a.revisionId);
      const from = this.store.getRevision(u.revisionId);
      if (to.designId !== from.designId)
        throw new BenchError(
          'EINVAL',
          'a unit can move to another revision of its own design only',
          'revisionId',
        );
    }
    const next: Unit = {
      ...u,
      serial: a.serial ?? u.serial,
      buildDate: a.buildDate ?? u.buildDate,
      builder: a.builder ?? u.builder,
      notes: a.notes ?? u.notes,
      revisionId: a.revisionId ?? u.revisionId,
    };
    try {
      this.db
        .prepare(
          'UPDATE units SET serial = ?, build_date = ?, builder = ?, notes = ?, revision_id = ? WHERE id = ?',
        )
        .run(next.serial, next.buildDate, next.builder, next.notes, next.revisionId, u.id);
    } catch (e) {
      if (isUniqueViolation(e))
        throw new BenchError('ECONFLICT', `a unit with serial "${next.serial}" already exists`, 'serial');
      throw e;
    }
    return next;
  }

  listUnits(designId?: string): UnitListing[] {
    return this.db
      .prepare(
        `SELECT u.id, u.revision_id AS revisionId, u.serial, u.build_date AS buildDate, u.builder, u.notes,
                u.created_at AS createdAt, d.id AS designId, d.name AS design, r.name AS revision,
                (SELECT COUNT(*) FROM sessions s WHERE s.unit_id = u.id) AS sessions,
                (SELECT MAX(s.started_at) FROM sessions s WHERE s.unit_id = u.id) AS lastSessionAt
         FROM units u JOIN revisions r ON r.id = u.revision_id JOIN designs d ON d.id = r.design_id
         WHERE (? IS NULL OR d.id = ?)
         ORDER BY u.serial`,
      )
      .all(designId ?? null, designId ?? null) as UnitListing[];
  }

  // ---- emission --------------------------------------------------------------------------------

  emission(sessionId: string): Emission {
    const r = this.db.prepare('SELECT emission FROM session_emission WHERE session_id = ?').get(sessionId) as
      { emission: Emission } | undefined;
    return r?.emission ?? 'dsb';
  }

  setEmission(sessionId: string, emission: Emission): Emission {
    this.store.getSession(sessionId);
    if (!EMISSIONS.includes(emission))
      throw new BenchError('EINVAL', `must be one of ${EMISSIONS.join(', ')}`, 'emission');
    this.db
      .prepare(
        'INSERT INTO session_emission (session_id, emission) VALUES (?, ?) ON CONFLICT(session_id) DO UPDATE SET emission = excluded.emission',
      )
      .run(sessionId, emission);
    return emission;
  }

  // ---- limit sets ------------------------------------------------------------------------------

  private rowToSet(r: LimitRow): LimitSetEntry {
    const set = validateLimitSet({
      id: r.id,
      name: r.name,
      source: r.source,
      standing: r.standing,
      notes: r.notes,
      rules: JSON.parse(r.rules_json) as unknown,
    });
    return { ...set, preset: false, createdAt: r.created_at, updatedAt: r.updated_at };
  }

  limitSets(): LimitSetEntry[] {
    const rows = this.db.prepare('SELECT * FROM limit_sets ORDER BY name').all() as LimitRow[];
    return [
      ...PRESETS.map((p) => ({ ...p, preset: true, createdAt: null, updatedAt: null })),
      ...rows.map((r) => this.rowToSet(r)),
    ];
  }

  limitSet(id: string, field = 'limitSetId'): LimitSetEntry {
    const p = PRESETS.find((x) => x.id === id);
    if (p) return { ...p, preset: true, createdAt: null, updatedAt: null };
    const r = this.db.prepare('SELECT * FROM limit_sets WHERE id = ? OR name = ?').get(id, id) as
      LimitRow | undefined;
    if (!r) throw new BenchError('ENOTFOUND', `no limit set "${id}"`, field);
    return this.rowToSet(r);
  }

  /**
   * Saves a user limit set: a new one when the id is missing or unknown, else replaces the user set with
   * that id. Presets cannot be changed (save a copy under a new name).
   */
  saveLimitSet(input: unknown): LimitSetEntry {
    const raw = (input && typeof input === 'object' ? input : {}) as Record<string, unknown>;
    const id = typeof raw.id === 'string' && raw.id.trim() !== '' ? raw.id.trim() : randomUUID();
    if (isPresetId(id))
      throw new BenchError('EREJECTED', 'a preset cannot be changed: save a copy under a new name', 'id');
    const set = validateLimitSet({ ...raw, id, standing: 'user' });
    if (PRESETS.some((p) => p.name.toLowerCase() === set.name.toLowerCase()))
      throw new BenchError('ECONFLICT', `"${set.name}" is the name of a preset: choose another`, 'name');
    const t = now();
    try {
      this.db
        .prepare(
          `INSERT INTO limit_sets (id, name, source, standing, notes, rules_json, created_at, updated_at)
           VALUES (?, ?, ?, 'user', ?, ?, ?, ?)
           ON CONFLICT(id) DO UPDATE SET name = excluded.name, source = excluded.source, notes = excluded.notes,
             rules_json = excluded.rules_json, updated_at = excluded.updated_at`,
        )
        .run(set.id, set.name, set.source, set.notes, JSON.stringify(set.rules), t, t);
    } catch (e) {
      if (isUniqueViolation(e))
        throw new BenchError('ECONFLICT', `a limit set named "${set.name}" already exists`, 'name');
      throw e;
    }
    return this.limitSet(set.id);
  }

  /** Deletes a user set and takes it off every unit's sheet settings, in one transaction. */
  deleteLimitSet(id: string): void {
    if (isPresetId(id)) throw new BenchError('EREJECTED', 'a preset cannot be deleted', 'limitSetId');
    const set = this.limitSet(id);
    this.store.tx(() => {
      this.db.prepare('DELETE FROM limit_sets WHERE id = ?').run(set.id);
      const rows = this.db.prepare('SELECT unit_id, limit_set_ids_json FROM unit_sheets').all() as {
        unit_id: string;
        limit_set_ids_json: string;
      }[];
      for (const r of rows) {
        const ids = JSON.parse(r.limit_set_ids_json) as string[];
        if (ids.includes(set.id))
          this.db
            .prepare('UPDATE unit_sheets SET limit_set_ids_json = ? WHERE unit_id = ?')
            .run(JSON.stringify(ids.filter((x) => x !== set.id)), r.unit_id);
      }
    });
  }

  // ---- sheet settings --------------------------------------------------------------------------

  sheetSettings(unitId: string): SheetSettings {
    this.store.getUnit(unitId);
    const r = this.db.prepare('SELECT * FROM unit_sheets WHERE unit_id = ?').get(unitId) as
      | {
          unit_id: string;
          limit_set_ids_json: string;
          reference: SuppressionReference;
          session_id: string | null;
          notes: string;
          updated_at: string;
        }
      | undefined;
    if (!r)
      return {
        unitId,
        limitSetIds: [...DEFAULT_SHEET_LIMIT_SETS],
        reference: 'pep',
        sessionId: null,
        notes: '',
        updatedAt: null,
      };
    return {
      unitId,
      limitSetIds: JSON.parse(r.limit_set_ids_json) as string[],
      reference: r.reference,
      sessionId: r.session_id,
      notes: r.notes,
      updatedAt: r.updated_at,
    };
  }

  saveSheetSettings(a: {
    unitId: string;
    limitSetIds?: string[];
    reference?: SuppressionReference;
    sessionId?: string | null;
    notes?: string;
  }): SheetSettings {
    const cur = this.sheetSettings(a.unitId);
    const next = {
      limitSetIds: a.limitSetIds ?? cur.limitSetIds,
      reference: a.reference ?? cur.reference,
      sessionId: a.sessionId === undefined ? cur.sessionId : a.sessionId,
      notes: a.notes ?? cur.notes,
    };
    next.limitSetIds.forEach((id, i) => this.limitSet(id, `limitSetIds[${i}]`));
    if (next.sessionId !== null) {
      const s = this.store.getSession(next.sessionId);
      if (s.unitId !== a.unitId)
        throw new BenchError('EINVAL', 'that session belongs to another unit', 'sessionId');
    }
    this.db
      .prepare(
        `INSERT INTO unit_sheets (unit_id, limit_set_ids_json, reference, session_id, notes, updated_at)
         VALUES (?, ?, ?, ?, ?, ?)
         ON CONFLICT(unit_id) DO UPDATE SET limit_set_ids_json = excluded.limit_set_ids_json,
           reference = excluded.reference, session_id = excluded.session_id, notes = excluded.notes,
           updated_at = excluded.updated_at`,
      )
      .run(a.unitId, JSON.stringify(next.limitSetIds), next.reference, next.sessionId, next.notes, now());
    return this.sheetSettings(a.unitId);
  }

  // ---- what the results are computed from --------------------------------------------------------

  /** A session's kept readings, oldest first, each with the correction it was stored with. */
  keptWithCorrections(sessionId: string): KeptRow[] {
    return this.db
      .prepare(
        `SELECT x.id, x.t_ms, x.freq_hz, x.role, x.dbm_dut, x.u_db, x.floor_limited, x.overload, x.settled,
                x.trims_json, x.note, x.correction_id, c.calibration_json, c.path_json
         FROM readings_wide x JOIN corrections c ON c.id = x.correction_id
         WHERE x.session_id = ? AND x.kept = 1 ORDER BY x.t_ms, x.id`,
      )
      .all(sessionId) as KeptRow[];
  }

  /** Sessions of a unit that kept at least one reading, newest first. */
  sessionsWithKept(unitId: string): { id: string; startedAt: string; kept: number }[] {
    return (
      this.db
        .prepare(
          `SELECT s.id, s.started_at AS startedAt,
                  (SELECT COUNT(*) FROM readings x WHERE x.session_no = s.no AND x.kept = 1) AS kept
           FROM sessions s WHERE s.unit_id = ? ORDER BY s.started_at DESC, s.id`,
        )
        .all(unitId) as { id: string; startedAt: string; kept: number }[]
    ).filter((r) => r.kept > 0);
  }

  /** A design's revisions, oldest first. */
  revisionsOf(designId: string): { id: string; name: string; changes: string; createdAt: string }[] {
    return this.db
      .prepare(
        'SELECT id, name, changes, created_at AS createdAt FROM revisions WHERE design_id = ? ORDER BY created_at, name',
      )
      .all(designId) as { id: string; name: string; changes: string; createdAt: string }[];
  }

  /** A revision's units by serial. */
  unitsOf(revisionId: string): { id: string; serial: string }[] {
    return this.db
      .prepare('SELECT id, serial FROM units WHERE revision_id = ? ORDER BY serial')
      .all(revisionId) as { id: string; serial: string }[];
  }
}
