// Runs anywhere (app/ is runtime-free). Level arithmetic: dBm <-> W, V and dBuV across a reference
// impedance, power sums, noise subtraction, thermal noise, units in text, and S-units (IARU R.1).
import { BenchError, check } from './errors';

/** Boltzmann constant in J/K (SI 2019, exact). */
export const BOLTZMANN = 1.380649e-23;

/** Reference impedance of every bench level unless a caller says otherwise, ohms. */
export const Z0 = 50;

function finite(value: number, field: string): number {
  check(
    typeof value === 'number' && Number.isFinite(value),
    field,
    `must be a finite number, got ${String(value)}`,
  );
  return value;
}

function positiveImpedance(z0: number): number {
  finite(z0, 'z0');
  check(z0 > 0, 'z0', `must be a positive impedance in ohms, got ${z0}`);
  return z0;
}

// ---------------------------------------------------------------------------------------------
// Power, voltage, dBuV

/** Power in watts for a level in dBm. -Infinity dBm gives 0 W. */
export function dbmToWatts(dbm: number): number {
  check(
    typeof dbm === 'number' && !Number.isNaN(dbm) && dbm !== Infinity,
    'dbm',
    `must be a level in dBm, got ${dbm}`,
  );
  return 10 ** ((dbm - 30) / 10);
}

/** Level in dBm for a power in watts; 0 W is -Infinity dBm, a negative power is EINVAL. */
export function wattsToDbm(w: number): number {
  finite(w, 'watts');
  check(w >= 0, 'watts', `power cannot be negative, got ${w} W`);
  return w === 0 ? -Infinity : 10 * Math.log10(w) + 30;
}

/** RMS voltage across z0 ohms (default 50) for a level in dBm. */
export function dbmToVrms(dbm: number, z0 = Z0): number {
  return Math.sqrt(positiveImpedance(z0) * dbmToWatts(dbm));
}

/** Level in dBm for an RMS voltage across z0 ohms; 0 V is -Infinity dBm, a negative voltage is EINVAL. */
export function vrmsToDbm(v: number, z0 = Z0): number {
  finite(v, 'vrms');
  check(v >= 0, 'vrms', `an RMS voltage cannot be negative, got ${v} V`);
  return wattsToDbm((v * v) / positiveImpedance(z0));
}

/** dB relative to 1 uV rms across z0 ohms. In 50 ohm, dBuV = dBm + 106.99. */
export function dbmToDbuv(dbm: number, z0 = Z0): number {
  return dbm + dbuvOffset(z0);
}

/** dBm for a level in dB relative to 1 uV rms across z0 ohms. */
export function dbuvToDbm(dbuv: number, z0 = Z0): number {
  return dbuv - dbuvOffset(z0);
}

// 20*log10(sqrt(z0 * 1 mW) / 1 uV) = 10*log10(z0 * 1e-3) + 120
function dbuvOffset(z0: number): number {
  return 10 * Math.log10(positiveImpedance(z0) * 1e-3) + 120;
}

// ---------------------------------------------------------------------------------------------
// Sums and noise

/**
 * Level of uncorrelated signals added in power: 10*log10(sum 10^(L/10)), in the same dB unit as the inputs.
 * -Infinity entries add nothing; no entries give -Infinity.
 */
export function powerSumDb(...levelsDbm: number[]): number {
  levelsDbm.forEach((l, i) =>
    check(
      typeof l === 'number' && !Number.isNaN(l) && l !== Infinity,
      `levels[${i}]`,
      `must be a level in dB, got ${l}`,
    ),
  );
  const top = Math.max(-Infinity, ...levelsDbm);
  if (top === -Infinity) return -Infinity;
  // Factor out the largest term so very small levels (e.g. -400 dBm) neither underflow nor lose precision.
  let sum = 0;
  for (const l of levelsDbm) sum += 10 ** ((l - top) / 10);
  return top + 10 * Math.log10(sum);
}

/**
 * The signal alone, from a reading of signal plus noise and a reading of the noise alone:
 * 10*log10(10^(m/10) - 10^(n/10)). Returns null when the reading is not above the noise,
 * because then nothing can be said about the signal except that it is below the noise.
 */
export function noiseCorrectedDb(measuredDbm: number, noiseDbm: number): number | null {
  finite(measuredDbm, 'measured');
  check(
    typeof noiseDbm === 'number' && !Number.isNaN(noiseDbm) && noiseDbm !== Infinity,
    'noise',
    `must be a level in dB, got ${noiseDbm}`,
  );
  if (!(measuredDbm > noiseDbm)) return null;
  // m + 10*log10(1 - 10^((n-m)/10)) keeps precision when the noise is far below.
  return measuredDbm + 10 * Math.log10(-Math.expm1(((noiseDbm - measuredDbm) / 10) * Math.LN10));
}

/**
 * Thermal noise power kTB in dBm, plus a noise figure.
 * @param bandwidthHz noise bandwidth in Hz, > 0
 * @param noiseFigureDb receiver noise figure in dB, >= 0 (0 = the bare kTB floor)
 * @param tempK source temperature in kelvin, > 0 (290 K is the IEEE reference)
 */
export function thermalNoiseDbm(bandwidthHz: number, noiseFigureDb = 0, tempK = 290): number {
  finite(bandwidthHz, 'bandwidthHz');
  check(bandwidthHz > 0, 'bandwidthHz', `must be > 0 Hz, got ${bandwidthHz}`);
  finite(noiseFigureDb, 'noiseFigureDb');
  check(noiseFigureDb >= 0, 'noiseFigureDb', `a noise figure cannot be below 0 dB, got ${noiseFigureDb}`);
  finite(tempK, 'tempK');
  check(tempK > 0, 'tempK', `must be above 0 K, got ${tempK}`);
  return 10 * Math.log10(BOLTZMANN * tempK * bandwidthHz) + 30 + noiseFigureDb;
}

// ---------------------------------------------------------------------------------------------
// Units

export type LevelUnit = 'dBm' | 'dBW' | 'W' | 'mW' | 'uW' | 'V' | 'mV' | 'uV' | 'dBuV';

/** Every unit toDbm/fromDbm understand, in the order we list them in messages. */
export const LEVEL_UNITS: readonly LevelUnit[] = ['dBm', 'dBW', 'W', 'mW', 'uW', 'V', 'mV', 'uV', 'dBuV'];

const UNIT_BY_LOWER = new Map<string, LevelUnit>(LEVEL_UNITS.map((u) => [u.toLowerCase(), u]));

/**
 * The canonical unit for a typed one, or EINVAL naming the field. Case is forgiven (dbm, MV is not:
 * see below) and the micro sign (µ U+00B5 or μ U+03BC) is read as u.
 */
export function parseUnit(unit: string, field = 'unit'): LevelUnit {
  check(typeof unit === 'string', field, `must be a unit name, one of ${LEVEL_UNITS.join(', ')}`);
  const u = unit.trim().replace(/[\u00b5\u03bc]/g, 'u');
  if ((LEVEL_UNITS as readonly string[]).includes(u)) return u as LevelUnit;
  // Upper-case M is mega; nobody means megawatts or megavolts at a receiver input, so say so instead of guessing.
  if (/^M[WV]$/.test(u)) {
    throw new BenchError(
      'EINVAL',
      `"${unit}" would be mega-${u[1] === 'W' ? 'watts' : 'volts'}; did you mean m${u[1]}?`,
      field,
    );
  }
  const found = UNIT_BY_LOWER.get(u.toLowerCase());
  if (found) return found;
  throw new BenchError(
    'EINVAL',
    `unknown unit "${unit}"; use one of ${LEVEL_UNITS.join(', ')} (µV is accepted for uV)`,
    field,
  );
}

const LINEAR_SCALE: Partial<Record<LevelUnit, number>> = {
  W: 1,
  mW: 1e-3,
  uW: 1e-6,
  V: 1,
  mV: 1e-3,
  uV: 1e-6,
};

/**
 * A level in any unit to dBm. Voltages are RMS across z0 ohms (default 50).
 * Linear quantities must be >= 0 (0 gives -Infinity dBm). Unknown unit -> EINVAL naming the field.
 */
export function toDbm(value: number, unit: string, field = 'level', z0 = Z0): number {
  const u = parseUnit(unit, field);
  finite(value, field);
  switch (u) {
    case 'dBm':
      return value;
    case 'dBW':
      return value + 30;
    case 'dBuV':
      return dbuvToDbm(value, z0);
    default: {
      check(value >= 0, field, `${value} ${u} is negative; a power or RMS voltage is >= 0`);
      const si = value * (LINEAR_SCALE[u] as number);
      return u.endsWith('W') ? wattsToDbm(si) : vrmsToDbm(si, z0);
    }
  }
}

/** A level in dBm expressed in another unit (voltages RMS across z0 ohms). */
export function fromDbm(dbm: number, unit: string, field = 'unit', z0 = Z0): number {
  const u = parseUnit(unit, field);
  switch (u) {
    case 'dBm':
      return dbm;
    case 'dBW':
      return dbm - 30;
    case 'dBuV':
      return dbmToDbuv(dbm, z0);
    default: {
      const si = u.endsWith('W') ? dbmToWatts(dbm) : dbmToVrms(dbm, z0);
      return si / (LINEAR_SCALE[u] as number);
    }
  }
}

// ---------------------------------------------------------------------------------------------
// S-units (IARU Region 1 Technical Recommendation R.1)

/** One row of a user's S-meter table: the level that puts the needle on S`s` (or S9 + overDb). */
export interface SPoint {
  /** S-unit, 0..9 */
  s: number;
  /** dB over S9 (only with s = 9), default 0 */
  overDb?: number;
  /** input level in dBm that reads this mark */
  dbm: number;
}

export interface SMeterScale {
  /** level at S9 in dBm */
  s9Dbm: number;
  /** dB per S-unit below S9 (6 in R.1; the mean step for a table) */
  dbPerS: number;
  name: string;
  /** Present for a user table (sTableScale): strictly rising marks, interpolated piecewise-linearly. */
  points?: readonly SPoint[];
}

/** R.1: S9 = -73 dBm (50 uV in 50 ohm) below 30 MHz. */
export const R1_S9_HF_DBM = -73;
/** R.1: S9 = -93 dBm (5 uV in 50 ohm) at and above 144 MHz. */
export const R1_S9_VHF_DBM = -93;
/** R.1: one S-unit is 6 dB. */
export const R1_DB_PER_S = 6;

/**
 * The IARU Region 1 R.1 scale for a frequency. R.1 sets S9 below 30 MHz and from 144 MHz up, and nothing
 * between; there the caller's choice decides (the HF value by default).
 * @param freqHz receive frequency in Hz, > 0
 */
export function iaruR1Scale(freqHz: number, between30and144MHz: 'hf' | 'vhf' = 'hf'): SMeterScale {
  finite(freqHz, 'freq_hz');
  check(freqHz > 0, 'freq_hz', `must be > 0 Hz, got ${freqHz}`);
  check(
    between30and144MHz === 'hf' || between30and144MHz === 'vhf',
    'between30and144MHz',
    `must be "hf" or "vhf", got ${String(between30and144MHz)}`,
  );
  if (freqHz < 30e6)
    return { s9Dbm: R1_S9_HF_DBM, dbPerS: R1_DB_PER_S, name: 'IARU R.1 below 30 MHz (S9 = -73 dBm)' };
  if (freqHz >= 144e6)
    return { s9Dbm: R1_S9_VHF_DBM, dbPerS: R1_DB_PER_S, name: 'IARU R.1 144 MHz and up (S9 = -93 dBm)' };
  return between30and144MHz === 'hf'
    ? {
        s9Dbm: R1_S9_HF_DBM,
        dbPerS: R1_DB_PER_S,
        name: 'IARU R.1 HF value chosen for 30-144 MHz (S9 = -73 dBm)',
      }
    : {
        s9Dbm: R1_S9_VHF_DBM,
        dbPerS: R1_DB_PER_S,
        name: 'IARU R.1 VHF value chosen for 30-144 MHz (S9 = -93 dBm)',
      };
}

// Position of a mark along the meter, for ordering only: S-units below S9, then dB over S9.
function markKey(s: number, overDb: number): number {
  return s + overDb / 1000;
}

function formatMark(s: number, overDb: number): string {
  return overDb > 0 ? `S${s}+${overDb}` : `S${s}`;
}

/**
 * A scale from a user's S-meter table, e.g. for a receiver whose S-units are 3-5 dB apart. Rows must rise
 * strictly in both mark and dBm, must include S9 (overDb 0) and at least one mark below S9. Rows above S9
 * use overDb. Outside the table: below, the first segment is extended down to S0; above, dB over S9 is dB.
 */
export function sTableScale(points: readonly SPoint[], name = 'user S-meter table'): SMeterScale {
  check(Array.isArray(points), 'sTable', 'must be a list of {s, dbm} rows');
  const rows: SPoint[] = [];
  points.forEach((p, i) => {
    const f = `sTable[${i}]`;
    check(typeof p === 'object' && p !== null, f, 'must be an object {s, dbm, overDb?}');
    finite(p.s, `${f}.s`);
    check(p.s >= 0 && p.s <= 9, `${f}.s`, `must be an S-unit from 0 to 9, got ${p.s}`);
    const overDb = p.overDb ?? 0;
    finite(overDb, `${f}.overDb`);
    check(overDb >= 0, `${f}.overDb`, `dB over S9 cannot be negative, got ${overDb}`);
    check(
      overDb === 0 || p.s === 9,
      `${f}.overDb`,
      `dB over S9 belongs only on an S9 row, got S${p.s}+${overDb}`,
    );
    finite(p.dbm, `${f}.dbm`);
    if (i > 0) {
      const prev = rows[i - 1];
      const prevOver = prev.overDb ?? 0;
      check(
        markKey(p.s, overDb) > markKey(prev.s, prevOver),
        overDb !== prevOver && p.s === 9 ? `${f}.overDb` : `${f}.s`,
        `rows must rise strictly: ${formatMark(p.s, overDb)} does not come after ${formatMark(prev.s, prevOver)} in sTable[${i - 1}]`,
      );
      check(
        p.dbm > prev.dbm,
        `${f}.dbm`,
        `levels must rise strictly with the mark: ${p.dbm} dBm for ${formatMark(p.s, overDb)} is not above ${prev.dbm} dBm for ${formatMark(prev.s, prevOver)}`,
      );
    }
    rows.push({ s: p.s, overDb, dbm: p.dbm });
  });
  check(rows.length >= 2, 'sTable', `needs at least 2 rows, got ${rows.length}`);
  const s9 = rows.find((r) => r.s === 9 && r.overDb === 0);
  check(s9 !== undefined, 'sTable', 'needs an S9 row (s: 9 without overDb): S9 anchors the dB-over-S9 marks');
  check(rows[0].s < 9, 'sTable', 'needs at least one row below S9');
  const first = rows[0];
  const dbPerS = (s9.dbm - first.dbm) / (9 - first.s);
  return { s9Dbm: s9.dbm, dbPerS, name, points: rows };
}

function checkScale(scale: SMeterScale): void {
  check(
    typeof scale === 'object' && scale !== null,
    'scale',
    'an S-meter scale is needed (e.g. iaruR1Scale(freqHz))',
  );
  finite(scale.s9Dbm, 'scale.s9Dbm');
  finite(scale.dbPerS, 'scale.dbPerS');
  check(scale.dbPerS > 0, 'scale.dbPerS', `must be > 0 dB per S-unit, got ${scale.dbPerS}`);
}

/**
 * Level in dBm for a meter reading: S`sUnits` (0..9, fractional allowed) plus `overDb` dB over S9
 * (only with sUnits = 9).
 */
export function sToDbm(sUnits: number, overDb: number, scale: SMeterScale): number {
  checkScale(scale);
  finite(sUnits, 's');
  check(sUnits >= 0 && sUnits <= 9, 's', `must be an S-unit from 0 to 9, got ${sUnits}`);
  finite(overDb, 'overDb');
  check(overDb >= 0, 'overDb', `dB over S9 cannot be negative, got ${overDb}`);
  check(overDb === 0 || sUnits === 9, 'overDb', `dB over S9 goes only with S9, got S${sUnits}+${overDb}`);
  const pts = scale.points;
  if (!pts || pts.length < 2) return scale.s9Dbm - (9 - sUnits) * scale.dbPerS + overDb;

  const key = markKey(sUnits, overDb);
  const keys = pts.map((p) => markKey(p.s, p.overDb ?? 0));
  const last = pts[pts.length - 1];
  if (key >= keys[keys.length - 1]) {
    // Beyond the last row (always an S9 row): dB over S9 is dB by definition.
    return last.dbm + (overDb - (last.overDb ?? 0));
  }
  let i = 1;
  while (i < pts.length - 1 && keys[i] < key) i++;
  const a = pts[i - 1];
  const b = pts[i];
  const t = (key - keys[i - 1]) / (keys[i] - keys[i - 1]);
  return a.dbm + t * (b.dbm - a.dbm);
}

/**
 * Meter reading for a level: `s` in 0..9 (fractional; 0 is the floor), and `overDb` >= 0 above S9.
 */
export function dbmToS(dbm: number, scale: SMeterScale): { s: number; overDb: number } {
  checkScale(scale);
  check(
    typeof dbm === 'number' && !Number.isNaN(dbm) && dbm !== Infinity,
    'dbm',
    `must be a level in dBm, got ${dbm}`,
  );
  const pts = scale.points;
  if (!pts || pts.length < 2) {
    if (dbm >= scale.s9Dbm) return { s: 9, overDb: dbm - scale.s9Dbm };
    return { s: Math.max(0, 9 - (scale.s9Dbm - dbm) / scale.dbPerS), overDb: 0 };
  }
  const last = pts[pts.length - 1];
  if (dbm >= last.dbm) {
    if (last.s === 9) return { s: 9, overDb: (last.overDb ?? 0) + (dbm - last.dbm) };
    return { s: 9, overDb: dbm - scale.s9Dbm };
  }
  let i = 1;
  while (i < pts.length - 1 && pts[i].dbm <= dbm) i++;
  const a = pts[i - 1];
  const b = pts[i];
  const t = (dbm - a.dbm) / (b.dbm - a.dbm);
  const aOver = a.overDb ?? 0;
  const bOver = b.overDb ?? 0;
  // Below the first row t < 0 extends the first segment downwards; the meter cannot read below S0.
  const s = Math.max(0, Math.min(9, a.s + t * (b.s - a.s)));
  const overDb = s === 9 ? Math.max(0, aOver + t * (bOver - aOver)) : 0;
  return { s, overDb };
}

/**
 * A reading as a signal report: "S7", "S9", "S9+12". Whole S-units and whole dB, rounded to nearest;
 * anything below half an S-unit reads "S0", the meter's floor.
 */
export function formatS(dbm: number, scale: SMeterScale): string {
  const { s, overDb } = dbmToS(dbm, scale);
  if (s >= 9) {
    const over = Math.round(overDb);
    return over >= 1 ? `S9+${over}` : 'S9';
  }
  return `S${Math.round(s)}`;
}

// ---------------------------------------------------------------------------------------------
// Text

// A decimal point or a decimal comma (app/numbers.ts reads both): "-12,5 dBm" is -12.5 dBm.
const NUMBER = String.raw`[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?`;
const LEVEL_RE = new RegExp(`^(${NUMBER})\\s*([a-zA-Z\\u00b5\\u03bc]+)$`);
const S_RE = /^s\s*(\d+(?:\.\d+)?)(?:\s*([+-])\s*(\d+(?:\.\d+)?)\s*(?:db)?)?$/i;

/**
 * A level typed by a person, to dBm: "-73 dBm", "50 uV", "50µV", "7.07 V", "-30dBW", "S9+10", "S7".
 * S-units need a scale (e.g. iaruR1Scale(freqHz)). A bare number is refused, since dBm and S-units are
 * both common on a bench and a wrong guess costs tens of dB.
 */
export function parseLevel(text: string, field = 'level', scale?: SMeterScale): number {
  check(typeof text === 'string', field, `must be text such as "-73 dBm", "50 uV" or "S9+10"`);
  // A typographic minus (U+2212) pasted from a document reads as a minus.
  const t = text.trim().replace(/\u2212/g, '-');
  check(t !== '', field, 'is empty; give a level such as "-73 dBm", "50 uV" or "S9+10"');

  const sm = S_RE.exec(t);
  if (sm) {
    const s = Number(sm[1]);
    const sign = sm[2];
    const over = sm[3] === undefined ? 0 : Number(sm[3]);
    check(
      scale !== undefined,
      field,
      `"${text}" is in S-units, which need a scale (the S9 level for the band)`,
    );
    check(s >= 0 && s <= 9, field, `"${text}": S-units run from S0 to S9, then S9+dB`);
    check(
      sign !== '-' || over === 0,
      field,
      `"${text}": below S9 write the S-unit (e.g. S8), not S9 minus dB`,
    );
    check(over === 0 || s === 9, field, `"${text}": dB over S9 goes only with S9, e.g. "S9+10"`);
    return sToDbm(s, over, scale);
  }

  const m = LEVEL_RE.exec(t);
  if (!m) {
    check(
      !new RegExp(`^${NUMBER}$`).test(t),
      field,
      `"${text}" has no unit; write e.g. "${t} dBm" (units: ${LEVEL_UNITS.join(', ')}, or S-units like S9+10)`,
    );
    throw new BenchError(
      'EINVAL',
      `cannot read "${text}" as a level; write e.g. "-73 dBm", "50 uV" or "S9+10"`,
      field,
    );
  }
  return toDbm(Number(m[1].replace(',', '.')), m[2], field);
}
