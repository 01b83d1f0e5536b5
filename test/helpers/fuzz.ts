// Test helpers for the property-based fuzz tests: what "a clear error" means, checked the same way everywhere.
import assert from 'node:assert/strict';
import fc from 'fast-check';
import { BenchError, ERROR_CODES } from '../../app/errors';

/**
 * One seed for every property test of a run: FUZZ_SEED (an integer) replays a run exactly; `npm test` picks a
 * fresh one when it is not set and prints it, so CI keeps finding new cases and any failure can be replayed.
 * On a failure fast-check also prints the seed and the path of the shrunk case.
 */
export const FUZZ_SEED = ((): number | undefined => {
  const text = process.env.FUZZ_SEED;
  if (text === undefined || text === '') return undefined;
  const seed = Number(text);
  if (!Number.isSafeInteger(seed))
    throw new Error(`FUZZ_SEED must be an integer (the seed a failed run printed), not "${text}"`);
  return seed;
})();
if (FUZZ_SEED !== undefined) fc.configureGlobal({ ...fc.readConfigureGlobal(), seed: FUZZ_SEED });

const CODES = new Set<string>(ERROR_CODES);

/** Texts that betray a crash inside our code rather than an error written for the user. */
const LEAKS =
  /Cannot read propert|Cannot set propert|is not a function|is not iterable|undefined is not|of undefined|of null|\[object Object\]|Maximum call stack|Invalid array length|out of range index|RangeError|TypeError|SyntaxError: Invalid regular/;

/**
 * A clear error: one of ours, with a documented code, a message written for a person (no leaked engine
 * text), and, for bad input, the field or place it is about.
 */
export function assertClearError(e: unknown, allowed: string[], what: string): asserts e is BenchError {
  assert.ok(
    e instanceof BenchError,
    `${what}: threw ${e instanceof Error ? `${e.name}: ${e.message}` : String(e)}`,
  );
  assert.ok(CODES.has(e.code) && allowed.includes(e.code), `${what}: code ${e.code} (${e.message})`);
  assert.ok(e.message.trim().length >= 8, `${what}: a message too short to help: "${e.message}"`);
  assert.doesNotMatch(e.message, LEAKS, `${what}: the message leaks an internal error`);
  if (e.code === 'EINVAL')
    assert.ok(e.field && e.field.length > 0, `${what}: EINVAL without a field: ${e.message}`);
}

/** The same check for a failure that crossed the service boundary ({ ok: false, code, message, field }). */
export function assertClearFailure(
  r: { ok: false; code: string; message: string; field?: string },
  allowed: string[],
  what: string,
): void {
  assert.ok(CODES.has(r.code) && allowed.includes(r.code), `${what}: code ${r.code} (${r.message})`);
  assert.ok(typeof r.message === 'string' && r.message.trim().length >= 8, `${what}: message "${r.message}"`);
  assert.doesNotMatch(r.message, LEAKS, `${what}: the message leaks an internal error`);
  if (r.code === 'EINVAL')
    assert.ok(r.field && r.field.length > 0, `${what}: EINVAL without a field: ${r.message}`);
}

/** Numbers of every awkward kind, for fields that should hold a finite one. */
export const AWKWARD_NUMBERS = [
  0,
  -0,
  1,
  -1,
  0.5,
  1e-300,
  1e300,
  -1e300,
  Number.MAX_SAFE_INTEGER + 2,
  Number.NaN,
  Number.POSITIVE_INFINITY,
  Number.NEGATIVE_INFINITY,
];

/** Every row of every table (but the migration record), for "nothing changed" checks. */
export function snapshotDb(db: import('better-sqlite3').Database): string {
  const tables = (
    db
      .prepare(
        "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name",
      )
      .all() as { name: string }[]
  ).map((r) => r.name);
  const text = (v: unknown) =>
    JSON.stringify(v, (_k, x: unknown) =>
      typeof x === 'bigint' ? String(x) : x instanceof Uint8Array ? Buffer.from(x).toString('hex') : x,
    );
  // Rows in a fixed order (some tables, reading_cells among them, have no rowid).
  return text(tables.map((t) => [t, db.prepare(`SELECT * FROM "${t}"`).all().map(text).sort()]));
}

/**
 * No bad row: the database is intact, every reference resolves, and every stored reading, session and
 * correction holds what its readers expect (finite numbers, known roles, JSON that parses to the right shape).
 */
export function assertNoBadRows(db: import('better-sqlite3').Database, what: string): void {
  assert.equal(db.pragma('integrity_check', { simple: true }), 'ok', `${what}: integrity_check`);
  assert.deepEqual(db.pragma('foreign_key_check'), [], `${what}: a reference points nowhere`);
  const finite = (row: Record<string, unknown>, cols: string[], table: string) => {
    for (const c of cols)
      assert.ok(
        typeof row[c] === 'number' && Number.isFinite(row[c]),
        `${what}: ${table} row ${String(row.id ?? row.uid ?? '')} has ${c} = ${String(row[c])}`,
      );
  };
  const json = (text: unknown, where: string): unknown => {
    assert.equal(typeof text, 'string', `${what}: ${where} is not text`);
    try {
      return JSON.parse(text as string);
    } catch {
      assert.fail(`${what}: ${where} is not JSON: ${String(text).slice(0, 80)}`);
    }
  };
  const roles = new Set([
    'carrier',
    'upper',
    'lower',
    'imd3u',
    'imd3l',
    'imd5u',
    'imd5l',
    'h2',
    'h3',
    'h4',
    'h5',
    'reference',
    'floor',
  ]);
  for (const r of db.prepare('SELECT * FROM readings_wide').all() as Record<string, unknown>[]) {
    finite(r, ['t_ms', 'freq_hz', 'raw', 'dbm_rx', 'dbm_dut', 'u_db'], 'readings');
    assert.ok((r.u_db as number) >= 0, `${what}: reading ${String(r.id)} has a negative uncertainty`);
    assert.ok(roles.has(r.role as string), `${what}: reading ${String(r.id)} has role ${String(r.role)}`);
    for (const f of ['settled', 'kept', 'floor_limited', 'overload'])
      assert.ok(r[f] === 0 || r[f] === 1, `${what}: reading ${String(r.id)} has ${f} = ${String(r[f])}`);
    const trims = json(r.trims_json, `reading ${String(r.id)} trims`);
    assert.ok(trims && typeof trims === 'object' && !Array.isArray(trims), `${what}: trims not an object`);
    for (const v of Object.values(trims as object))
      assert.ok(Number.isFinite(v), `${what}: reading ${String(r.id)} has a trim position ${String(v)}`);
  }
  for (const s of db.prepare('SELECT * FROM sessions').all() as Record<string, unknown>[]) {
    finite(s, ['carrier_hz', 'tone_hz', 'tx_pep_dbm', 'rx_pep_dbm'], 'sessions');
    assert.ok(
      (s.carrier_hz as number) > 0,
      `${what}: session ${String(s.id)} has carrier ${String(s.carrier_hz)}`,
    );
    const rx = json(s.receiver_json, `session ${String(s.id)} receiver`) as Record<string, unknown>;
    assert.ok(rx && typeof rx.source === 'string' && Number.isFinite(rx.maxInputDbm), `${what}: receiver`);
    assert.ok(Array.isArray(json(s.path_json, `session ${String(s.id)} path`)), `${what}: path not a list`);
    assert.ok(
      Array.isArray(json(s.trims_json, `session ${String(s.id)} trims`)),
      `${what}: trims not a list`,
    );
  }
  for (const c of db.prepare('SELECT * FROM corrections').all() as Record<string, unknown>[]) {
    json(c.calibration_json, `correction ${String(c.id)} calibration`);
    assert.ok(
      Array.isArray(json(c.path_json, `correction ${String(c.id)} path`)),
      `${what}: correction path`,
    );
  }
  for (const t of ['designs', 'revisions'])
    for (const r of db.prepare(`SELECT * FROM ${t}`).all() as Record<string, unknown>[])
      assert.ok(
        typeof r.name === 'string' && r.name.trim() !== '',
        `${what}: ${t} ${String(r.id)} has no name`,
      );
  for (const u of db.prepare('SELECT * FROM units').all() as Record<string, unknown>[])
    assert.ok(
      typeof u.serial === 'string' && u.serial.trim() !== '',
      `${what}: unit ${String(u.id)} has no serial`,
    );
}
