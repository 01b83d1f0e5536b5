// Runs in Node. Every stored reading (of everything, one design, one unit or one session) as CSV: one row
// per reading, the unit of each column in its header, times in UTC ISO 8601, numbers in full precision.
import { toCsv, type CsvSeparator, type CsvValue } from '../../app/csv';
import { BenchError } from '../../app/errors';
import type { Store } from './store';
import { connectionOf } from './connection';

export interface CsvScope {
  designId?: string;
  unitId?: string;
  sessionId?: string;
}

interface Row {
  design: string;
  revision: string;
  serial: string;
  session_id: string;
  started_at: string;
  operator: string;
  emission: string | null;
  uid: string;
  t_ms: number;
  role: string;
  freq_hz: number;
  raw: number;
  dbm_rx: number;
  dbm_dut: number;
  u_db: number;
  settled: number;
  kept: number;
  floor_limited: number;
  overload: number;
  trims_json: string;
  session_trims_json: string;
  note: string;
}

export function readingsCsv(
  store: Store,
  scope: CsvScope = {},
  separator: CsvSeparator = 'comma',
): { csv: string; rows: number; fileName: string } {
  const given = [scope.designId, scope.unitId, scope.sessionId].filter((x) => x !== undefined).length;
  if (given > 1) throw new BenchError('EINVAL', 'give at most one of design, unit or session', 'scope');
  if (scope.designId) store.getDesign(scope.designId);
  if (scope.unitId) store.getUnit(scope.unitId);
  if (scope.sessionId) store.getSession(scope.sessionId);
  const rows = connectionOf(store)
    .prepare(
      `SELECT d.name AS design, r.name AS revision, u.serial, s.id AS session_id, s.started_at, s.operator,
              e.emission, x.uid, x.t_ms, x.role, x.freq_hz, x.raw, x.dbm_rx, x.dbm_dut, x.u_db, x.settled, x.kept,
              x.floor_limited, x.overload, x.trims_json, s.trims_json AS session_trims_json, x.note
       FROM readings_wide x JOIN sessions s ON s.id = x.session_id JOIN units u ON u.id = s.unit_id
            JOIN revisions r ON r.id = u.revision_id JOIN designs d ON d.id = r.design_id
            LEFT JOIN session_emission e ON e.session_id = s.id
       WHERE (? IS NULL OR d.id = ?) AND (? IS NULL OR u.id = ?) AND (? IS NULL OR s.id = ?)
       ORDER BY d.name, u.serial, s.started_at, s.id, x.t_ms, x.id`,
    )
    .all(
      scope.designId ?? null,
      scope.designId ?? null,
      scope.unitId ?? null,
      scope.unitId ?? null,
      scope.sessionId ?? null,
      scope.sessionId ?? null,
    ) as Row[];
  // One column per trimmer key; its unit in the header when every session agrees on it.
  const units = new Map<string, Set<string>>();
  for (const r of rows)
    for (const t of JSON.parse(r.session_trims_json) as { key: string; unit: string }[]) {
      if (!units.has(t.key)) units.set(t.key, new Set());
      units.get(t.key)!.add(t.unit);
    }
  const keys = [...units.keys()].sort();
  const header = [
    'design',
    'revision',
    'unit serial',
    'session id',
    'session start (UTC)',
    'operator',
    'emission',
    'reading uid',
    'time (UTC)',
    'point',
    'frequency (Hz)',
    'raw reading (receiver units)',
    'level at receiver (dBm)',
    'level at transmitter (dBm)',
    'standard uncertainty (dB, k=1)',
    'steady (1/0)',
    'kept (1/0)',
    'at receiver floor (1/0)',
    'near overload (1/0)',
    ...keys.map((k) => {
      const u = units.get(k)!;
      return u.size === 1 ? `trim ${k} (${[...u][0]})` : `trim ${k}`;
    }),
    'note',
  ];
  const body: CsvValue[][] = rows.map((r) => {
    const trims = JSON.parse(r.trims_json) as Record<string, number>;
    return [
      r.design,
      r.revision,
      r.serial,
      r.session_id,
      r.started_at,
      r.operator,
      r.emission ?? 'dsb',
      r.uid,
      new Date(r.t_ms).toISOString(),
      r.role,
      r.freq_hz,
      r.raw,
      r.dbm_rx,
      r.dbm_dut,
      r.u_db,
      r.settled === 1,
      r.kept === 1,
      r.floor_limited === 1,
      r.overload === 1,
      ...keys.map((k) => (typeof trims[k] === 'number' ? trims[k] : null)),
      r.note,
    ];
  });
  const what = scope.sessionId
    ? `session-${scope.sessionId.slice(0, 8)}`
    : scope.unitId
      ? `unit-${store.getUnit(scope.unitId).serial}`
      : scope.designId
        ? `design-${store.getDesign(scope.designId).name}`
        : 'all';
  return {
    csv: toCsv(header, body, { separator }),
    rows: body.length,
    fileName: `nullbench-readings-${what.replace(/[^A-Za-z0-9._-]+/g, '_')}.csv`,
  };
}
