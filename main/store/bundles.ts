// Runs in Node. Exports a bundle (app/bundle) from the database and imports one into it. Import validates
// the whole file first (JSON syntax with line and column, every field with zod, every cross-reference),
// then merges in one transaction: records already here (same ID, or same name/serial) are not duplicated,
// and a bad file writes nothing.
import { createHash } from 'node:crypto';
import {
  BUNDLE_FORMAT,
  BUNDLE_KINDS,
  BUNDLE_VERSION,
  BundleSchema,
  formatBundle,
  type Bundle,
  type BundleKind,
  type ImportSummary,
} from '../../app/bundle';
import { validateCalibration } from '../../app/calibration';
import { isDbfsCalibration, validateDbfsCalibration } from '../../app/spectrum/dbfs';
import { BenchError } from '../../app/errors';
import { PRESETS, validateLimitSet } from '../../app/limits';
import { refuseUnsafeSetup, validatePath } from '../../app/path';
import { benchErrorFromZod } from '../../app/zodissue';
import { rowToReading, type ReadingRow, type Store } from './store';
import { uidToDb } from './uid';
import { connectionOf } from './connection';
import type { LimitRow } from './records';

interface Rows {
  designs: { id: string; name: string; notes: string; created_at: string }[];
  revisions: { id: string; design_id: string; name: string; changes: string; created_at: string }[];
  units: {
    id: string;
    revision_id: string;
    serial: string;
    build_date: string;
    builder: string;
    notes: string;
    created_at: string;
  }[];
}

/** The SHA-256 the store keys a calibration + path pair by (the same text, the same key). */
export function correctionDigest(calibrationJson: string, pathJson: string): string {
  return createHash('sha256').update(calibrationJson).update('\0').update(pathJson).digest('hex');
}

const byStr =
  <T>(k: (x: T) => string) =>
  (a: T, b: T) =>
    k(a) < k(b) ? -1 : k(a) > k(b) ? 1 : 0;

/** Every design (or the one given) with everything under it, in a stable order. */
export function exportBundle(store: Store, designId?: string): Bundle {
  const db = connectionOf(store);
  const design = designId ? store.getDesign(designId) : null;
  const designs = (db.prepare('SELECT * FROM designs').all() as Rows['designs'])
    .filter((d) => !design || d.id === design.id)
    .sort(byStr((d) => d.name));
  const dIds = new Set(designs.map((d) => d.id));
  const revisions = (db.prepare('SELECT * FROM revisions').all() as Rows['revisions'])
    .filter((r) => dIds.has(r.design_id))
    .sort(byStr((r) => `${r.design_id}\0${r.created_at}\0${r.name}\0${r.id}`));
  const rIds = new Set(revisions.map((r) => r.id));
  const units = (db.prepare('SELECT * FROM units').all() as Rows['units'])
    .filter((u) => rIds.has(u.revision_id))
    .sort(byStr((u) => u.serial));
  const uIds = new Set(units.map((u) => u.id));
  const sessionRows = (
    db
      .prepare(
        `SELECT s.*, COALESCE(e.emission, 'dsb') AS emission FROM sessions s
         LEFT JOIN session_emission e ON e.session_id = s.id`,
      )
      .all() as Record<string, unknown>[]
  )
    .filter((s) => uIds.has(s.unit_id as string))
    .sort(byStr((s) => `${s.started_at as string}\0${s.id as string}`));
  const sIds = new Set(sessionRows.map((s) => s.id as string));
  const readingRows = (
    db
      .prepare('SELECT x.*, c.digest FROM readings_wide x JOIN corrections c ON c.id = x.correction_id')
      .all() as Record<string, unknown>[]
  ).filter((r) => sIds.has(r.session_id as string));
  const sessionOrder = new Map(sessionRows.map((s, i) => [s.id as string, i]));
  readingRows.sort(
    (a, b) =>
      sessionOrder.get(a.session_id as string)! - sessionOrder.get(b.session_id as string)! ||
      (a.t_ms as number) - (b.t_ms as number) ||
      byStr<Record<string, unknown>>((r) => r.uid as string)(a, b),
  );
  const digests = new Set(readingRows.map((r) => r.digest as string));
  const corrections = (
    db.prepare('SELECT digest, calibration_json, path_json FROM corrections').all() as {
      digest: string;
      calibration_json: string;
      path_json: string;
    }[]
  )
    .filter((c) => digests.has(c.digest))
    .sort(byStr((c) => c.digest));
  const gaps = (
    db.prepare('SELECT session_id, t_start_ms, t_end_ms, code, message FROM gaps').all() as {
      session_id: string;
      t_start_ms: number;
      t_end_ms: number | null;
      code: string;
      message: string;
    }[]
  )
    .filter((g) => sIds.has(g.session_id))
    .sort(
      (a, b) =>
        sessionOrder.get(a.session_id)! - sessionOrder.get(b.session_id)! ||
        a.t_start_ms - b.t_start_ms ||
        byStr<{ code: string }>((g) => g.code)(a, b),
    );
  const sheets = (
    db.prepare('SELECT * FROM unit_sheets').all() as {
      unit_id: string;
      limit_set_ids_json: string;
      reference: string;
      session_id: string | null;
      notes: string;
      updated_at: string;
    }[]
  )
    .filter((s) => uIds.has(s.unit_id))
    .sort(byStr((s) => s.unit_id));
  // The user's limit sets travel with every bundle: they are small and the sheets refer to them.
  const limitSets = (db.prepare('SELECT * FROM limit_sets').all() as LimitRow[]).sort(byStr((l) => l.id));

  const bundle = {
    format: BUNDLE_FORMAT,
    version: BUNDLE_VERSION,
    scope: { design: design ? design.name : null },
    designs: designs.map((d) => ({ id: d.id, name: d.name, notes: d.notes, createdAt: d.created_at })),
    revisions: revisions.map((r) => ({
      id: r.id,
      designId: r.design_id,
      name: r.name,
      changes: r.changes,
      createdAt: r.created_at,
    })),
    units: units.map((u) => ({
      id: u.id,
      revisionId: u.revision_id,
      serial: u.serial,
      buildDate: u.build_date,
      builder: u.builder,
      notes: u.notes,
      createdAt: u.created_at,
    })),
    sessions: sessionRows.map((s) => ({
      id: s.id,
      unitId: s.unit_id,
      receiver: JSON.parse(s.receiver_json as string),
      path: JSON.parse(s.path_json as string),
      carrierHz: s.carrier_hz,
      toneHz: s.tone_hz,
      txPepDbm: s.tx_pep_dbm,
      rxPepDbm: s.rx_pep_dbm,
      operator: s.operator,
      notes: s.notes,
      trims: JSON.parse(s.trims_json as string),
      startedAt: s.started_at,
      endedAt: s.ended_at,
      emission: s.emission,
    })),
    corrections: corrections.map((c) => ({
      digest: c.digest,
      calibration: JSON.parse(c.calibration_json),
      path: JSON.parse(c.path_json),
    })),
    readings: readingRows.map((row) => {
      // The bundle's reading is the store's, keyed by its stable uid instead of the row id, with its correction.
      const r = row as unknown as ReadingRow & { uid: string; digest: string };
      const { id: _id, note, ...rest } = rowToReading(r);
      return { uid: r.uid, ...rest, correction: r.digest, note };
    }),
    gaps: gaps.map((g) => ({
      sessionId: g.session_id,
      tStartMs: g.t_start_ms,
      tEndMs: g.t_end_ms,
      code: g.code,
      message: g.message,
    })),
    limitSets: limitSets.map((l) => ({
      id: l.id,
      name: l.name,
      source: l.source,
      standing: l.standing,
      notes: l.notes,
      rules: JSON.parse(l.rules_json),
      createdAt: l.created_at,
      updatedAt: l.updated_at,
    })),
    sheets: sheets.map((s) => ({
      unitId: s.unit_id,
      limitSetIds: JSON.parse(s.limit_set_ids_json),
      reference: s.reference,
      sessionId: s.session_id,
      notes: s.notes,
      updatedAt: s.updated_at,
    })),
  };
  return bundle as Bundle;
}

export function exportBundleText(store: Store, designId?: string): string {
  return formatBundle(exportBundle(store, designId));
}

/** JSON.parse with the line and column of a syntax error. */
export function parseJsonText(input: string): unknown {
  const text = input.replace(/^\uFEFF/, '');
  try {
    return JSON.parse(text);
  } catch (e) {
    const msg = (e as Error).message;
    const m = /position (\d+)/.exec(msg);
    let pos = m ? Number(m[1]) : /Unexpected end/.test(msg) ? text.length : -1;
    if (pos < 0) {
      // Some engines give "line N column M" themselves.
      const lc = /line (\d+) column (\d+)/.exec(msg);
      if (lc) throw new BenchError('EINVAL', `not valid JSON: ${msg}`, `line ${lc[1]}, column ${lc[2]}`);
      throw new BenchError('EINVAL', `not valid JSON: ${msg}`, 'file');
    }
    pos = Math.min(pos, text.length);
    const before = text.slice(0, pos);
    const line = before.split('\n').length;
    const column = pos - before.lastIndexOf('\n');
    const atEnd = /Unexpected end/.test(msg) || pos >= text.trimEnd().length;
    const what = atEnd ? 'the file ends early (cut off?)' : msg.replace(/ in JSON at position \d+.*$/s, '');
    throw new BenchError('EINVAL', `not valid JSON: ${what}`, `line ${line}, column ${column}`);
  }
}

/** Validates a parsed bundle completely: shape, every path and calibration, every cross-reference. */
export function validateBundle(input: unknown, store?: Store): Bundle {
  if (input && typeof input === 'object' && !Array.isArray(input)) {
    const o = input as Record<string, unknown>;
    if (o.format !== BUNDLE_FORMAT)
      throw new BenchError(
        'EINVAL',
        `this is not a Nullbench bundle (expected "${BUNDLE_FORMAT}")`,
        'format',
      );
    if (typeof o.version === 'number' && o.version > BUNDLE_VERSION)
      throw new BenchError(
        'EINVAL',
        `bundle version ${o.version} is newer than this Nullbench reads (${BUNDLE_VERSION}): update Nullbench`,
        'version',
      );
  }
  const r = BundleSchema.safeParse(input);
  if (!r.success) throw benchErrorFromZod(r.error);
  const b = r.data;
  const unique = (
    list: { id?: string; uid?: string; digest?: string }[],
    kind: string,
    key: 'id' | 'uid' | 'digest',
  ) => {
    const seen = new Set<string>();
    list.forEach((x, i) => {
      const v = x[key]!;
      if (seen.has(v)) throw new BenchError('EINVAL', `${key} "${v}" appears twice`, `${kind}[${i}].${key}`);
      seen.add(v);
    });
    return seen;
  };
  const exists = (table: string, id: string) =>
    !!store && !!connectionOf(store).prepare(`SELECT 1 FROM ${table} WHERE id = ?`).get(id);
  const designIds = unique(b.designs, 'designs', 'id');
  const revisionIds = unique(b.revisions, 'revisions', 'id');
  const unitIds = unique(b.units, 'units', 'id');
  const sessionIds = unique(b.sessions, 'sessions', 'id');
  const digests = unique(b.corrections, 'corrections', 'digest');
  unique(b.readings, 'readings', 'uid');
  unique(b.limitSets, 'limitSets', 'id');
  const ref = (ok: boolean, field: string, what: string) => {
    if (!ok)
      throw new BenchError(
        'EINVAL',
        `refers to ${what}, which is neither in the bundle nor in this database`,
        field,
      );
  };
  b.revisions.forEach((x, i) =>
    ref(
      designIds.has(x.designId) || exists('designs', x.designId),
      `revisions[${i}].designId`,
      `design "${x.designId}"`,
    ),
  );
  b.units.forEach((x, i) =>
    ref(
      revisionIds.has(x.revisionId) || exists('revisions', x.revisionId),
      `units[${i}].revisionId`,
      `revision "${x.revisionId}"`,
    ),
  );
  b.sessions.forEach((x, i) => {
    ref(unitIds.has(x.unitId) || exists('units', x.unitId), `sessions[${i}].unitId`, `unit "${x.unitId}"`);
    const path = rethrowAt(() => validatePath(x.path), `sessions[${i}]`);
    if (x.endedAt !== null && Date.parse(x.endedAt) < Date.parse(x.startedAt))
      throw new BenchError(
        'EINVAL',
        `ends (${x.endedAt}) before it starts (${x.startedAt})`,
        `sessions[${i}].endedAt`,
      );
    // The same receiver safety check as a live set-up: a bundle cannot bring in a session that declares more
    // power into its receiver than the receiver is rated for (it could be continued or reported from here).
    refuseUnsafeSetup(x.txPepDbm, path, x.receiver.maxInputDbm, `sessions[${i}].path`);
    if (x.receiver.calibration != null)
      rethrowAt(() => validateCalibration(x.receiver.calibration), `sessions[${i}].receiver.calibration`);
  });
  const rawCorrections = (input as { corrections: { calibration?: unknown; path: unknown }[] }).corrections;
  b.corrections.forEach((c, i) => {
    const cal = JSON.stringify(rawCorrections[i].calibration ?? null);
    const path = JSON.stringify(rawCorrections[i].path);
    if (correctionDigest(cal, path) !== c.digest)
      throw new BenchError(
        'EINVAL',
        'does not match its calibration and path (edited by hand?)',
        `corrections[${i}].digest`,
      );
    if (c.calibration != null)
      rethrowAt(
        () =>
          isDbfsCalibration(c.calibration)
            ? validateDbfsCalibration(c.calibration)
            : validateCalibration(c.calibration),
        `corrections[${i}].calibration`,
      );
    rethrowAt(() => validatePath(c.path), `corrections[${i}]`);
  });
  b.readings.forEach((x, i) => {
    ref(
      sessionIds.has(x.sessionId) || exists('sessions', x.sessionId),
      `readings[${i}].sessionId`,
      `session "${x.sessionId}"`,
    );
    if (!digests.has(x.correction))
      throw new BenchError('EINVAL', 'names no correction of this bundle', `readings[${i}].correction`);
  });
  b.gaps.forEach((x, i) => {
    ref(
      sessionIds.has(x.sessionId) || exists('sessions', x.sessionId),
      `gaps[${i}].sessionId`,
      `session "${x.sessionId}"`,
    );
    if (x.tEndMs !== null && x.tEndMs < x.tStartMs)
      throw new BenchError(
        'EINVAL',
        `ends (${x.tEndMs}) before it starts (${x.tStartMs})`,
        `gaps[${i}].tEndMs`,
      );
  });
  b.limitSets.forEach((l, i) => {
    if (l.id.startsWith('preset:'))
      throw new BenchError('EINVAL', 'a preset is never part of a bundle', `limitSets[${i}].id`);
    const { createdAt: _c, updatedAt: _u, ...set } = l;
    rethrowAt(() => validateLimitSet(set), `limitSets[${i}]`);
  });
  const limitIds = new Set(b.limitSets.map((l) => l.id));
  b.sheets.forEach((s, i) => {
    ref(unitIds.has(s.unitId) || exists('units', s.unitId), `sheets[${i}].unitId`, `unit "${s.unitId}"`);
    s.limitSetIds.forEach((id, j) => {
      if (!PRESETS.some((p) => p.id === id))
        ref(
          limitIds.has(id) || exists('limit_sets', id),
          `sheets[${i}].limitSetIds[${j}]`,
          `limit set "${id}"`,
        );
    });
    if (s.sessionId !== null)
      ref(
        sessionIds.has(s.sessionId) || exists('sessions', s.sessionId),
        `sheets[${i}].sessionId`,
        `session "${s.sessionId}"`,
      );
  });
  return b;
}

/** Runs fn; a BenchError from it gets `prefix` put in front of its field. */
function rethrowAt<T>(fn: () => T, prefix: string): T {
  try {
    return fn();
  } catch (e) {
    if (e instanceof BenchError) {
      const f = e.field === '(input)' ? '' : (e.field ?? '');
      const field = f.startsWith('path') || f === '' ? `${prefix}${f ? `.${f}` : ''}` : `${prefix}.${f}`;
      throw new BenchError(e.code, e.message.replace(e.field ? `${e.field}: ` : '', ''), field);
    }
    throw e;
  }
}

const zero = (): Record<BundleKind, number> =>
  Object.fromEntries(BUNDLE_KINDS.map((k) => [k, 0])) as Record<BundleKind, number>;

/**
 * Merges a bundle's text into the store in one transaction. IDs that are already here are skipped (a
 * differing local record is kept and reported); a design, revision or unit with a new ID but the name or
 * serial of a local one is matched to it. Any error rolls the whole import back.
 */
export function importBundle(store: Store, text: string): ImportSummary {
  const raw = parseJsonText(text);
  const b = validateBundle(raw, store);
  // The JSON columns keep the file's own values (zod fills defaults and orders keys), so that exporting
  // again gives the same bytes; zod keeps list order, so index i is the same record in both.
  const src = raw as Record<string, Record<string, unknown>[]>;
  const rawJson = (list: string, i: number, key: string) => JSON.stringify(src[list][i][key] ?? null);
  const db = connectionOf(store);
  const sum: ImportSummary = { added: zero(), unchanged: zero(), keptLocal: [], matchedByName: [] };
  const designMap = new Map<string, string>();
  const revisionMap = new Map<string, string>();
  const unitMap = new Map<string, string>();
  store.tx(() => {
    for (const d of b.designs) {
      const byId = db.prepare('SELECT * FROM designs WHERE id = ?').get(d.id) as
        Rows['designs'][number] | undefined;
      const byName = db.prepare('SELECT * FROM designs WHERE name = ?').get(d.name) as
        Rows['designs'][number] | undefined;
      if (byId) {
        designMap.set(d.id, d.id);
        if (byId.name === d.name && byId.notes === d.notes) sum.unchanged.designs++;
        else
          sum.keptLocal.push(
            `design "${byId.name}" differs from the bundle's "${d.name}": kept as it is here`,
          );
      } else if (byName) {
        designMap.set(d.id, byName.id);
        sum.matchedByName.push(`design "${d.name}" matched by name`);
      } else {
        db.prepare('INSERT INTO designs (id, name, notes, created_at) VALUES (?, ?, ?, ?)').run(
          d.id,
          d.name,
          d.notes,
          d.createdAt,
        );
        designMap.set(d.id, d.id);
        sum.added.designs++;
      }
    }
    for (const r of b.revisions) {
      const designId = designMap.get(r.designId) ?? r.designId;
      const byId = db.prepare('SELECT * FROM revisions WHERE id = ?').get(r.id) as
        Rows['revisions'][number] | undefined;
      const byName = db
        .prepare('SELECT * FROM revisions WHERE design_id = ? AND name = ?')
        .get(designId, r.name) as Rows['revisions'][number] | undefined;
      if (byId) {
        revisionMap.set(r.id, r.id);
        if (byId.name === r.name && byId.changes === r.changes && byId.design_id === designId)
          sum.unchanged.revisions++;
        else
          sum.keptLocal.push(
            `revision "${byId.name}" differs from the bundle's "${r.name}": kept as it is here`,
          );
      } else if (byName) {
        revisionMap.set(r.id, byName.id);
        sum.matchedByName.push(`revision "${r.name}" matched by name`);
      } else {
        db.prepare(
          'INSERT INTO revisions (id, design_id, name, changes, created_at) VALUES (?, ?, ?, ?, ?)',
        ).run(r.id, designId, r.name, r.changes, r.createdAt);
        revisionMap.set(r.id, r.id);
        sum.added.revisions++;
      }
    }
    for (const u of b.units) {
      const revisionId = revisionMap.get(u.revisionId) ?? u.revisionId;
      const byId = db.prepare('SELECT * FROM units WHERE id = ?').get(u.id) as
        Rows['units'][number] | undefined;
      const bySerial = db.prepare('SELECT * FROM units WHERE serial = ?').get(u.serial) as
        Rows['units'][number] | undefined;
      if (byId) {
        unitMap.set(u.id, u.id);
        const same =
          byId.serial === u.serial &&
          byId.build_date === u.buildDate &&
          byId.builder === u.builder &&
          byId.notes === u.notes &&
          byId.revision_id === revisionId;
        if (same) sum.unchanged.units++;
        else sum.keptLocal.push(`unit ${byId.serial} differs from the bundle's: kept as it is here`);
      } else if (bySerial) {
        unitMap.set(u.id, bySerial.id);
        if (bySerial.revision_id !== revisionId)
          sum.keptLocal.push(`unit ${u.serial} is under another revision here: kept there`);
        sum.matchedByName.push(`unit ${u.serial} matched by serial`);
      } else {
        db.prepare(
          'INSERT INTO units (id, revision_id, serial, build_date, builder, notes, created_at) VALUES (?, ?, ?, ?, ?, ?, ?)',
        ).run(u.id, revisionId, u.serial, u.buildDate, u.builder, u.notes, u.createdAt);
        unitMap.set(u.id, u.id);
        sum.added.units++;
      }
    }
    for (const [i, s] of b.sessions.entries()) {
      if (db.prepare('SELECT 1 FROM sessions WHERE id = ?').get(s.id)) {
        sum.unchanged.sessions++;
        continue;
      }
      db.prepare(
        `INSERT INTO sessions (id, unit_id, receiver_json, path_json, carrier_hz, tone_hz, tx_pep_dbm, rx_pep_dbm,
           operator, notes, trims_json, started_at, ended_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      ).run(
        s.id,
        unitMap.get(s.unitId) ?? s.unitId,
        rawJson('sessions', i, 'receiver'),
        rawJson('sessions', i, 'path'),
        s.carrierHz,
        s.toneHz,
        s.txPepDbm,
        s.rxPepDbm,
        s.operator,
        s.notes,
        rawJson('sessions', i, 'trims'),
        s.startedAt,
        s.endedAt,
      );
      if (s.emission !== 'dsb')
        db.prepare('INSERT INTO session_emission (session_id, emission) VALUES (?, ?)').run(s.id, s.emission);
      sum.added.sessions++;
    }
    const correctionIds = new Map<string, number>();
    for (const [i, c] of b.corrections.entries()) {
      db.prepare(
        'INSERT OR IGNORE INTO corrections (digest, calibration_json, path_json) VALUES (?, ?, ?)',
      ).run(c.digest, rawJson('corrections', i, 'calibration'), rawJson('corrections', i, 'path'));
      correctionIds.set(
        c.digest,
        (db.prepare('SELECT id FROM corrections WHERE digest = ?').get(c.digest) as { id: number }).id,
      );
    }
    // A reading already here is found by its session and time (the readings index), then its stable uid.
    const hasReading = db.prepare('SELECT 1 FROM readings WHERE session_no = ? AND t_ms = ? AND uid = ?');
    const insertReading = db.prepare(
      `INSERT INTO readings (uid, session_no, t_ms, freq_hz, role, raw, dbm_rx, dbm_dut, u_db, settled, kept,
         floor_limited, overload, trims_id, correction_id, note)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
    );
    const sessionNo = new Map<string, number>();
    for (const [i, r] of b.readings.entries()) {
      const uid = uidToDb(r.uid);
      let no = sessionNo.get(r.sessionId);
      if (no === undefined) sessionNo.set(r.sessionId, (no = store.sessionNo(r.sessionId)));
      if (hasReading.get(no, r.t, uid)) {
        sum.unchanged.readings++;
        continue;
      }
      insertReading.run(
        uid,
        no,
        r.t,
        r.freqHz,
        r.role,
        r.raw,
        r.dbmRx,
        r.dbmDut,
        r.uDb,
        r.settled ? 1 : 0,
        r.kept ? 1 : 0,
        r.floorLimited ? 1 : 0,
        r.overload ? 1 : 0,
        store.trimSetId(rawJson('readings', i, 'trims')),
        correctionIds.get(r.correction)!,
        r.note,
      );
      sum.added.readings++;
    }
    for (const g of b.gaps) {
      const there = db
        .prepare('SELECT 1 FROM gaps WHERE session_id = ? AND t_start_ms = ? AND code = ? AND message = ?')
        .get(g.sessionId, g.tStartMs, g.code, g.message);
      if (there) {
        sum.unchanged.gaps++;
        continue;
      }
      db.prepare(
        'INSERT INTO gaps (session_id, t_start_ms, t_end_ms, code, message) VALUES (?, ?, ?, ?, ?)',
      ).run(g.sessionId, g.tStartMs, g.tEndMs, g.code, g.message);
      sum.added.gaps++;
    }
    const limitMap = new Map<string, string>();
    for (const [i, l] of b.limitSets.entries()) {
      const byId = db.prepare('SELECT rules_json, name FROM limit_sets WHERE id = ?').get(l.id) as
        { rules_json: string; name: string } | undefined;
      const byName = db.prepare('SELECT id FROM limit_sets WHERE name = ?').get(l.name) as
        { id: string } | undefined;
      if (byId) {
        if (byId.rules_json === rawJson('limitSets', i, 'rules') && byId.name === l.name)
          sum.unchanged.limitSets++;
        else sum.keptLocal.push(`limit set "${byId.name}" differs from the bundle's: kept as it is here`);
      } else if (byName) {
        // Sheets of the bundle that name this set then name the local one.
        limitMap.set(l.id, byName.id);
        sum.keptLocal.push(`a limit set named "${l.name}" is already here: kept as it is here`);
      } else {
        db.prepare(
          `INSERT INTO limit_sets (id, name, source, standing, notes, rules_json, created_at, updated_at)
           VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
        ).run(
          l.id,
          l.name,
          l.source,
          l.standing,
          l.notes,
          rawJson('limitSets', i, 'rules'),
          l.createdAt,
          l.updatedAt,
        );
        sum.added.limitSets++;
      }
    }
    for (const s of b.sheets) {
      const unitId = unitMap.get(s.unitId) ?? s.unitId;
      if (db.prepare('SELECT 1 FROM unit_sheets WHERE unit_id = ?').get(unitId)) {
        sum.unchanged.sheets++;
        continue;
      }
      db.prepare(
        `INSERT INTO unit_sheets (unit_id, limit_set_ids_json, reference, session_id, notes, updated_at)
         VALUES (?, ?, ?, ?, ?, ?)`,
      ).run(
        unitId,
        JSON.stringify(s.limitSetIds.map((id) => limitMap.get(id) ?? id)),
        s.reference,
        s.sessionId,
        s.notes,
        s.updatedAt,
      );
      sum.added.sheets++;
    }
  });
  return sum;
}
