// Runs in Node. Reads a session's kept readings from the database with the calibration and path each was
// corrected with, splits each reading's uncertainty into calibration, path and meter parts, and hands them
// to app/analysis; collects a design's sessions per revision for app/compare.
import {
  analyseSession,
  type Emission,
  type PointLevel,
  type SessionFigures,
  type SuppressionReference,
} from '../../app/analysis';
import type { Design, Revision, Session, TrimPositions, Unit } from '../../app/api';
import { iaruR1Calibration, validateCalibration } from '../../app/calibration';
import { isDbfsCalibration, validateDbfsCalibration } from '../../app/spectrum/dbfs';
import { compareRevisions, type RevisionEntry } from '../../app/compare';
import type { DesignComparison } from '../../app/api/records';
import { analysePath, validatePath } from '../../app/path';
import type { Store } from '../store/store';
import { Records } from '../store/records';

export interface SessionResult {
  session: Session;
  unit: Unit;
  revision: Revision;
  design: Design;
  emission: Emission;
  /** every kept reading, oldest first, with its uncertainty parts */
  kept: (PointLevel & { trims: TrimPositions; note: string; settled: boolean })[];
  figures: SessionFigures;
  /** name and date of the calibration the readings were corrected with (null date: not stated) */
  calibration: { name: string; madeAt: string | null; uDb: number; isDefault: boolean };
}

interface CorrectionParts {
  uCalDb: number;
  uPathDb: number;
}

/** Calibration and path uncertainty of one stored correction; the IARU R.1 default when none was stored. */
function partsOf(calibrationJson: string, pathJson: string): CorrectionParts {
  const cal = JSON.parse(calibrationJson) as unknown;
  // Readings measured by FFT carry the SDR's full-scale figure instead of a receiver table.
  const c =
    cal == null
      ? iaruR1Calibration()
      : isDbfsCalibration(cal)
        ? validateDbfsCalibration(cal)
        : validateCalibration(cal);
  return { uCalDb: c.uDb ?? 0.5, uPathDb: analysePath(validatePath(JSON.parse(pathJson))).uDb };
}

/** The parts of a stored total, clamped so that they never add up to more than the total itself. */
function splitU(uDb: number, p: CorrectionParts): CorrectionParts {
  const uCalDb = Math.min(p.uCalDb, uDb);
  return { uCalDb, uPathDb: Math.min(p.uPathDb, Math.sqrt(uDb ** 2 - uCalDb ** 2)) };
}

export function loadSessionResult(store: Store, sessionId: string): SessionResult {
  const session = store.getSession(sessionId);
  const unit = store.getUnit(session.unitId);
  const revision = store.getRevision(unit.revisionId);
  const design = store.getDesign(revision.designId);
  const records = new Records(store);
  const emission = records.emission(sessionId);
  const rows = records.keptWithCorrections(sessionId);
  const parts = new Map<number, CorrectionParts>();
  const kept = rows.map((r) => {
    let p = parts.get(r.correction_id);
    if (!p) {
      p = partsOf(r.calibration_json, r.path_json);
      parts.set(r.correction_id, p);
    }
    return {
      role: r.role,
      id: r.id,
      t: r.t_ms,
      freqHz: r.freq_hz,
      dbm: r.dbm_dut,
      uDb: r.u_db,
      ...splitU(r.u_db, p),
      floorLimited: r.floor_limited === 1,
      overload: r.overload === 1,
      settled: r.settled === 1,
      trims: JSON.parse(r.trims_json) as TrimPositions,
      note: r.note,
    };
  });
  const cal =
    session.receiver.calibration == null
      ? iaruR1Calibration()
      : validateCalibration(session.receiver.calibration);
  return {
    session,
    unit,
    revision,
    design,
    emission,
    kept,
    figures: analyseSession(kept, emission),
    calibration: {
      name: cal.name,
      madeAt: cal.madeAt ?? null,
      uDb: cal.uDb ?? 0.5,
      isDefault: session.receiver.calibration == null,
    },
  };
}

/** Sessions of a unit that kept at least one reading, newest first. */
export function sessionsWithResults(
  store: Store,
  unitId: string,
): { id: string; startedAt: string; kept: number }[] {
  return new Records(store).sessionsWithKept(unitId);
}

/** Every revision of a design (oldest first) with the figures of every session of every unit. */
export function compareDesign(
  store: Store,
  designId: string,
  reference: SuppressionReference,
): DesignComparison {
  const design = store.getDesign(designId);
  const records = new Records(store);
  const revisions = records.revisionsOf(designId);
  const entries: RevisionEntry[] = revisions.map((r) => {
    const units = records.unitsOf(r.id);
    const sessions = units.flatMap((u) =>
      sessionsWithResults(store, u.id).map((s) => {
        const res = loadSessionResult(store, s.id);
        return {
          unitId: u.id,
          serial: u.serial,
          sessionId: s.id,
          startedAt: s.startedAt,
          figures: res.figures,
        };
      }),
    );
    return {
      revisionId: r.id,
      name: r.name,
      changes: r.changes,
      createdAt: r.createdAt,
      unitCount: units.length,
      sessions,
    };
  });
  return { designId, design: design.name, ...compareRevisions(entries, reference) };
}
